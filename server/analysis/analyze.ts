import { AnalysisInputError } from './errors.ts'
import { binInterp, irfft, nextPowerOfTwo, rfft } from './fft.ts'
import { logSpaced, standardGrid } from './grid.ts'
import { parseImpedanceTable } from './impedance-table.ts'
import { stationProfileSchema, type ChannelRole, type StationProfile } from '../../shared/utils/station-profile.ts'
import {
  fitSmallSignal,
  lowestMeasurableFsHz,
  reAt20C,
  resonanceAtBottom,
  seedSmallSignal,
  type ClassicalResult,
  type FitResult,
} from './small-signal.ts'
import { generateSweep, harmonicDelayS, sweepRate } from './sweep.ts'
import type {
  AnalysisCurves,
  AnalysisFlags,
  AnalysisParameters,
  AnalysisResult,
  AnalysisTimings,
  AnalyzeOptions,
  PerChannel,
  ThdAtPoint,
} from './types.ts'
import { validateRecording, type ChannelStats, type ValidatedRecording } from './validate.ts'
import { ENGINE_VERSION } from './version.ts'

/** SPL reference pressure, 20 µPa (IEC 61672-1). */
export const REFERENCE_PRESSURE_PA = 20e-6
/** Drive for the sensitivity convention: 2.83 V RMS = 1 W into 8 Ω, referred to 1 m. */
export const REFERENCE_DRIVE_V = 2.83
export const REFERENCE_DISTANCE_M = 1
/**
 * Speed of sound in dry air: c = 331.3·√(1 + T/273.15) m/s, the ideal-gas c = √(κ·R·T) with the dry-air
 * constants of the ISO 2533 standard atmosphere (κ = 1.4, R = 287.05287 J/(kg·K)): 331.3 m/s at 0 °C,
 * 343.2 m/s at 20 °C.
 */
export function speedOfSoundMs(tempC: number): number {
  return 331.3 * Math.sqrt(1 + tempC / 273.15)
}
export const DEFAULT_SENSITIVITY_BAND_HZ: [number, number] = [300, 3000]
export const DEFAULT_THD_AT_HZ = [100, 1000, 3000]

/** Tikhonov term of the spectral division, relative to the reference's peak power (−60 dB). */
const REGULARISATION = 1e-6
/** Length kept of the linear impulse responses; the driver's responses have died away well before. */
const LINEAR_WINDOW_S = 0.2
/** Part of the linear window kept ahead of the impulse (converter pre-ringing). */
const PRE_WINDOW_S = 0.002
/** Share of each window used for its half-Hann tapers. */
const TAPER_FRACTION = 0.2
/** Harmonic orders reported (H2…H5). */
const HARMONIC_ORDERS = [2, 3, 4, 5] as const
/** Top of the usable sweep (its last fade starts near 0.93·f2 for a 1 s, 20 Hz–20 kHz sweep). */
const USABLE_TOP_FRACTION = 0.9
/** Bottom of the usable sweep above f1 (fade-in). */
const USABLE_BOTTOM_FACTOR = 1.1
/** Fit band: from 1.2·f1 (clear of the fade-in) to 5 kHz (where Le dominates but eddy losses are still small). */
const FIT_LOW_FACTOR = 1.2
const FIT_HIGH_HZ = 5000
const FIT_POINTS_PER_OCTAVE = 48
/** Effective impedance above this is an open coil; below SHORT a shorted one (our thresholds: far outside any driver's range). */
export const OPEN_COIL_OHM = 1000
export const SHORTED_COIL_OHM = 0.5
/** A channel below this SNR is reported as noisy. */
export const LOW_SNR_DB = 30
/** A mic channel below this SNR carries no usable sound. */
const NO_SOUND_SNR_DB = 10
const NO_RESONANCE_NOTE = 'No resonance: the impedance shows no resonance peak (a blocked cone, or no driver connected).'
/** Lowest harmonic order counted as rub and buzz. */
export const RUB_BUZZ_MIN_ORDER = 10
/** Rub-and-buzz band floor: the buzz of a rubbing coil or a loose particle lies above it. */
export const RUB_BUZZ_BAND_LOW_HZ = 1000
/** Default rub-and-buzz limit (our choice; the rationale is in docs/method.md, "Rub and buzz"). */
export const RUB_BUZZ_LIMIT_DB = -50
/** Cycles of the sweep per rub-and-buzz block. */
const RUB_BUZZ_BLOCK_CYCLES = 2
const RUB_BUZZ_MIN_BLOCK_S = 0.005

/** The profile, parsed with its defaults. @throws AnalysisInputError `invalid_profile`. */
export function checkProfile(profile: StationProfile): StationProfile {
  const parsed = stationProfileSchema.safeParse(profile)
  if (!parsed.success) {
    throw new AnalysisInputError('invalid_profile', `Invalid station profile: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`)
  }
  return parsed.data
}

/** Y·conj(X) / (|X|² + ε): regularised spectral division of two interleaved spectra. */
function divide(Y: Float64Array, X: Float64Array): Float64Array {
  let maxP = 0
  for (let i = 0; i < X.length; i += 2) maxP = Math.max(maxP, X[i]! * X[i]! + X[i + 1]! * X[i + 1]!)
  const eps = REGULARISATION * maxP
  const out = new Float64Array(Y.length)
  for (let i = 0; i < X.length; i += 2) {
    const xr = X[i]!
    const xi = X[i + 1]!
    const yr = Y[i]!
    const yi = Y[i + 1]!
    const d = xr * xr + xi * xi + eps
    out[i] = (yr * xr + yi * xi) / d
    out[i + 1] = (yi * xr - yr * xi) / d
  }
  return out
}

function addSpectra(a: Float64Array, b: Float64Array, sign = 1): Float64Array {
  const out = new Float64Array(a.length)
  for (let i = 0; i < a.length; i++) out[i] = a[i]! + sign * b[i]!
  return out
}

function halfHann(i: number, n: number): number {
  return 0.5 - 0.5 * Math.cos((Math.PI * i) / n)
}

/**
 * Cuts [start, start+len) out of the circular impulse response `h` (length N), with half-Hann
 * tapers, into a buffer of length M; sample `origin` of the response lands at index 0 and
 * earlier samples wrap to the end, so phases stay referred to `origin`.
 */
function cutWindow(h: Float64Array, origin: number, preSamples: number, postSamples: number, M: number): Float64Array {
  const N = h.length
  const out = new Float64Array(M)
  const taperPre = Math.max(1, Math.round(preSamples * TAPER_FRACTION * 2))
  const taperPost = Math.max(1, Math.round(postSamples * TAPER_FRACTION))
  for (let i = -preSamples; i < postSamples; i++) {
    let w = 1
    const fromStart = i + preSamples
    if (fromStart < taperPre) w *= halfHann(fromStart, taperPre)
    const toEnd = postSamples - 1 - i
    if (toEnd < taperPost) w *= halfHann(toEnd, taperPost)
    const src = (((origin + i) % N) + N) % N
    out[(i + M) % M] = h[src]! * w
  }
  return out
}

function wrapDeg(rad: number): number {
  let d = (rad * 180) / Math.PI
  d = ((((d + 180) % 360) + 360) % 360) - 180
  return d
}

function emptyParameters(band: [number, number], limit: number): AnalysisParameters {
  const nulls: PerChannel<number | null> = { mic: null, drive: null, sense: null }
  return {
    reOhm: null,
    re20Ohm: null,
    ambientC: null,
    fsHz: null,
    qms: null,
    qes: null,
    qts: null,
    leMh: null,
    zmaxOhm: null,
    zminOhm: null,
    fZminHz: null,
    fitErrorPct: null,
    sensitivityDb: null,
    sensitivityBandHz: band,
    thdPct: null,
    thdMaxPct: null,
    thdMaxAtHz: null,
    rubBuzzDb: null,
    rubBuzzAtHz: null,
    rubBuzzLimitDb: limit,
    acousticDelayMs: null,
    effectiveImpedanceOhm: null,
    snrDb: { ...nulls },
    peakDbfs: { ...nulls },
  }
}

function emptyCurves(freqHz: number[]): AnalysisCurves {
  return {
    freqHz,
    impedanceOhm: null,
    impedancePhaseDeg: null,
    splDb: null,
    splPhaseDeg: null,
    thdPct: null,
    h2Pct: null,
    h3Pct: null,
    h4Pct: null,
    h5Pct: null,
  }
}

interface ImpedanceFigures {
  fit: FitResult | null
  classical: ClassicalResult | null
}

/** Seeds and runs the small-signal fit on impedance points (complex when `im` is given). */
function fitImpedance(freqHz: number[], re: number[] | null, im: number[] | null, mag: number[]): ImpedanceFigures {
  const seeded = seedSmallSignal(freqHz, re, im, mag)
  if (seeded === null) return { fit: null, classical: null }
  const fit = re && im ? fitSmallSignal({ freqHz, re, im }, seeded.seed) : fitSmallSignal({ freqHz, mag }, seeded.seed)
  const ok = [fit.reOhm, fit.fsHz, fit.qms, fit.qes, fit.leH].every((v) => Number.isFinite(v) && v > 0)
  return { fit: ok ? fit : null, classical: seeded.classical }
}

const hz = (f: number): string => (f < 100 ? f.toFixed(1) : f.toFixed(0))

/**
 * Withholds a fit whose resonance lies too close to the bottom of the data: at or below the lowest
 * fitted frequency, or less than half an octave above the start of the measurement (see
 * lowestMeasurableFsHz). Returns the figures to report and, when withheld, the note saying why.
 */
function gateLowResonance(
  fig: ImpedanceFigures,
  data: { freqHz: number[]; re: number[] | null; mag: number[] },
  what: 'sweep' | 'table',
  sweepStartHz = 0,
): { fig: ImpedanceFigures; note: string | null } {
  const lowest = data.freqHz[0]
  if (lowest === undefined) return { fig, note: null }
  const start = what === 'sweep' ? sweepStartHz : lowest
  const limit = lowestMeasurableFsHz(start, lowest)
  const fs = fig.fit?.fsHz
  const none: ImpedanceFigures = { fit: null, classical: null }
  const bottom = what === 'sweep' ? `the sweep's lowest valid frequency (${hz(lowest)} Hz): start the sweep lower.` : `the table's lowest frequency (${hz(lowest)} Hz): export the table from lower down.`
  if (fs !== undefined && fs >= limit) return { fig, note: null }
  if (fs !== undefined && fs > lowest) {
    const whose = what === 'sweep' ? `the sweep start (${hz(start)} Hz)` : `the table's first frequency (${hz(start)} Hz)`
    const fix = what === 'sweep' ? 'start the sweep at' : 'export the table from'
    return { fig: none, note: `Resonance near ${hz(fs)} Hz, less than half an octave above ${whose}: ${fix} ${hz(fs / Math.SQRT2)} Hz or lower for a trustworthy Fs and Qms.` }
  }
  if (fs !== undefined || resonanceAtBottom(data.freqHz, data.re, data.mag)) return { fig: none, note: `Resonance at or below ${bottom}` }
  return { fig, note: null }
}

/**
 * The impedance magnitude may stand this far above its minimum at the lowest frequency and still
 * count as not falling from there (our figure: a resonance below the data lifts it by 10 % or more
 * within two octaves of a driver's Fs; measurement noise stays well under 5 %).
 */
const NOT_FALLING_RATIO = 1.05

/**
 * No fit, no resonance withheld at the bottom of the data, and a magnitude that does not fall from
 * its lowest frequency (so no resonance lies below the data either): the impedance has no
 * resonance at all, a unit fault. Data that starts above a resonance is not this: it falls first.
 */
function showsNoResonance(gated: { fig: ImpedanceFigures; note: string | null }, mag: readonly number[]): boolean {
  if (gated.fig.fit || gated.note !== null || !mag.length) return false
  let min = Number.POSITIVE_INFINITY
  for (const m of mag) min = Math.min(min, m)
  return mag[0]! <= NOT_FALLING_RATIO * min
}

function applyFit(params: AnalysisParameters, fig: ImpedanceFigures, ambientC: number | undefined): void {
  const f = fig.fit
  if (!f) return
  params.reOhm = f.reOhm
  params.ambientC = ambientC ?? null
  params.re20Ohm = ambientC === undefined ? null : reAt20C(f.reOhm, ambientC)
  params.fsHz = f.fsHz
  params.qms = f.qms
  params.qes = f.qes
  params.qts = f.qts
  params.leMh = f.leH * 1000
  params.zmaxOhm = f.zmaxOhm
  params.fitErrorPct = f.rmsErrorPct
}

function zminAbove(freqHz: number[], mag: (number | null)[], aboveHz: number): { z: number; f: number } | null {
  let best: { z: number; f: number } | null = null
  for (let i = 0; i < freqHz.length; i++) {
    const m = mag[i]
    if (m === null || m === undefined || freqHz[i]! <= aboveHz) continue
    if (best === null || m < best.z) best = { z: m, f: freqHz[i]! }
  }
  return best
}

/**
 * Analyses one station recording (exponential sweep; mic, drive and/or sense channels): its bytes,
 * or the recording validateRecordingSource decoded from a file with the same profile (the worker
 * does that, so it never holds the file's bytes beside the decoded channels).
 * @throws AnalysisInputError for bad input or a station fault (see validateRecording).
 */
export function analyzeRecording(bytes: Uint8Array | ValidatedRecording, profileIn: StationProfile, options: AnalyzeOptions = {}): AnalysisResult {
  const tStart = performance.now()
  const profile = checkProfile(profileIn)
  const band = options.sensitivityBandHz ?? DEFAULT_SENSITIVITY_BAND_HZ
  const rbLimit = options.rubBuzzLimitDb ?? RUB_BUZZ_LIMIT_DB
  const timings: AnalysisTimings = { validate: 0, deconvolve: 0, impedance: 0, fit: 0, response: 0, distortion: 0, rubBuzz: 0, total: 0 }
  const v = bytes instanceof Uint8Array ? validateRecording(bytes, profile, { allowClipped: options.allowClipped ?? false }) : bytes
  timings.validate = v.validationMs
  const fs = v.sampleRate
  const sweep = profile.sweep
  const N = nextPowerOfTwo(v.analysisFrames)
  const { mic, drive, sense } = v.channels
  const R = profile.senseResistorOhm
  const stat = (role: ChannelRole): ChannelStats | undefined => v.stats.find((s) => s.role === role)

  const freqHz = standardGrid(sweep.f2Hz)
  const params = emptyParameters(band, rbLimit)
  const curves = emptyCurves(freqHz)
  const unmeasured: string[] = []
  const notes: string[] = []
  for (const s of v.stats) {
    params.snrDb[s.role] = s.snrDb
    params.peakDbfs[s.role] = s.peakDbfs
  }
  const flags: AnalysisFlags = {
    polarity: null,
    openCoil: false,
    shortedCoil: false,
    clippedChannels: v.stats.filter((s) => s.clipped).map((s) => s.role),
    lowSnrChannels: v.stats.filter((s) => s.snrDb !== null && s.snrDb < LOW_SNR_DB).map((s) => s.role),
    rubBuzz: null,
    noResonance: false,
  }

  // Coil continuity: a station fault was already rejected by validation; what is left is the unit.
  const dStat = stat('drive')
  const sStat = stat('sense')
  if (dStat && sStat) {
    const current = sStat.sweepRmsV / R
    const zEff = current > 0 ? dStat.sweepRmsV / current : Number.POSITIVE_INFINITY
    params.effectiveImpedanceOhm = Number.isFinite(zEff) ? zEff : null
    flags.openCoil = zEff > OPEN_COIL_OHM
    flags.shortedCoil = v.driveSilentWithCurrent || zEff < SHORTED_COIL_OHM
    if (flags.openCoil) notes.push(`Open coil: ${dStat.sweepRmsV.toFixed(3)} V RMS at the terminals but no current.`)
    if (flags.shortedCoil) notes.push(`Shorted coil: ${current.toFixed(3)} A RMS flows with ${dStat.sweepRmsV.toFixed(4)} V at the terminals.`)
  } else {
    unmeasured.push('coil_continuity')
    notes.push('Open/short detection needs both drive and sense channels.')
  }
  const unitDead = flags.openCoil || flags.shortedCoil

  // ---- Deconvolution ----
  let t = performance.now()
  const sweepStart = Math.round(sweep.preSilenceS * fs)
  const P = mic ? rfft(mic, N) : null
  const Xs = sense ? rfft(sense, N) : null
  let Xd = drive ? rfft(drive, N) : null
  let Xa: Float64Array // the amplifier's output: the stimulus as played
  if (Xd && Xs) Xa = addSpectra(Xd, Xs)
  else if (Xd) Xa = Xd
  else {
    const regen = new Float64Array(N)
    regen.set(generateSweep(sweep, fs, Math.SQRT2 * sweep.levelVrms), sweepStart)
    Xa = rfft(regen, N)
    if (Xs) Xd = addSpectra(Xa, Xs, -1)
    notes.push('No drive channel: the stimulus was regenerated from the profile sweep.')
  }
  timings.deconvolve = performance.now() - t

  const fLoValid = sweep.f1Hz * USABLE_BOTTOM_FACTOR
  const fTopValid = Math.min(sweep.f2Hz * USABLE_TOP_FRACTION, 0.5 * fs * 0.9)
  const preN = Math.round(PRE_WINDOW_S * fs)
  const linN = Math.round(LINEAR_WINDOW_S * fs)
  // The windowed linear responses are short: a smaller transform of them is enough.
  const M = Math.min(N, nextPowerOfTwo(2 * (preN + linN)))
  const linBinHz = fs / M

  // ---- Impedance ----
  t = performance.now()
  let Yw: Float64Array | null = null // windowed admittance × R, spectrum of length N
  if (Xs && Xd && !unitDead) {
    const hs = irfft(divide(Xs, Xd), N)
    Yw = rfft(cutWindow(hs, 0, preN, linN, M), M)
    const zMag: (number | null)[] = []
    const zPh: (number | null)[] = []
    for (const f of freqHz) {
      if (f < fLoValid || f > fTopValid) {
        zMag.push(null)
        zPh.push(null)
        continue
      }
      const [yr, yi] = binInterp(Yw, f / linBinHz)
      const d = yr * yr + yi * yi
      const zr = (R * yr) / d
      const zi = (-R * yi) / d
      zMag.push(Math.hypot(zr, zi))
      zPh.push((Math.atan2(zi, zr) * 180) / Math.PI)
    }
    curves.impedanceOhm = zMag
    curves.impedancePhaseDeg = zPh
  } else {
    unmeasured.push('impedance', 'small_signal')
    notes.push(unitDead ? 'Impedance not measured: the coil is open or shorted.' : 'Impedance needs a sense channel (and a drive channel or a regenerated stimulus).')
  }
  timings.impedance = performance.now() - t

  // ---- Small-signal fit ----
  t = performance.now()
  let classical: ClassicalResult | null = null
  if (Yw) {
    const fLo = Math.max(sweep.f1Hz * FIT_LOW_FACTOR, 10)
    const fHi = Math.min(FIT_HIGH_HZ, fTopValid)
    const fre: number[] = []
    const zre: number[] = []
    const zim: number[] = []
    const zmag: number[] = []
    let lastBin = -1
    for (const f of logSpaced(fLo, fHi, FIT_POINTS_PER_OCTAVE)) {
      const b = Math.round(f / linBinHz)
      if (b === lastBin) continue
      lastBin = b
      const yr = Yw[2 * b]!
      const yi = Yw[2 * b + 1]!
      const d = yr * yr + yi * yi
      fre.push(b * linBinHz)
      zre.push((R * yr) / d)
      zim.push((-R * yi) / d)
      zmag.push(R / Math.sqrt(d))
    }
    const gated = gateLowResonance(fitImpedance(fre, zre, zim, zmag), { freqHz: fre, re: zre, mag: zmag }, 'sweep', sweep.f1Hz)
    const { fig, note } = gated
    classical = fig.classical
    applyFit(params, fig, options.ambientC)
    if (!fig.fit) {
      unmeasured.push('small_signal')
      flags.noResonance = showsNoResonance(gated, zmag)
      notes.push(note ?? NO_RESONANCE_NOTE)
    }
    if (curves.impedanceOhm && params.fsHz) {
      const zm = zminAbove(freqHz, curves.impedanceOhm, params.fsHz)
      if (zm) {
        params.zminOhm = zm.z
        params.fZminHz = zm.f
      }
    }
  }
  timings.fit = performance.now() - t

  // ---- Acoustic response, polarity ----
  t = performance.now()
  const micStat = stat('mic')
  const hasSound = P !== null && micStat !== undefined && !unitDead && (micStat.snrDb === null || micStat.snrDb >= NO_SOUND_SNR_DB)
  let ha: Float64Array | null = null
  let Ha: Float64Array | null = null
  let peakIdx = 0
  if (P && hasSound) {
    ha = irfft(divide(P, Xa), N)
    // The acoustic impulse: largest sample within the first 50 ms (mic within ~17 m).
    const searchN = Math.min(N, Math.round(0.05 * fs))
    let best = 0
    for (let i = 0; i < searchN; i++) {
      const a = Math.abs(ha[i]!)
      if (a > best) {
        best = a
        peakIdx = i
      }
    }
    params.acousticDelayMs = (1000 * peakIdx) / fs
    Ha = rfft(cutWindow(ha, 0, preN, linN, M), M)
    const sensScale = (REFERENCE_DRIVE_V * (profile.micDistanceM / REFERENCE_DISTANCE_M)) / profile.micSensitivityVPerPa
    const tau = profile.micDistanceM / speedOfSoundMs(options.ambientC ?? 20)
    const spl: (number | null)[] = []
    const splPh: (number | null)[] = []
    const terminalCorrection = Yw !== null // Xa/Xd = (Z + R)/Z = 1 + Y·R
    for (const f of freqHz) {
      if (f < fLoValid || f > fTopValid) {
        spl.push(null)
        splPh.push(null)
        continue
      }
      const b = f / linBinHz
      let [hr, hi] = binInterp(Ha, b)
      if (terminalCorrection) {
        const [yr, yi] = binInterp(Yw!, b)
        const cr = 1 + yr
        const ci = yi
        const nr = hr * cr - hi * ci
        hi = hr * ci + hi * cr
        hr = nr
      }
      const mag = Math.hypot(hr, hi) * sensScale
      spl.push(20 * Math.log10(mag / REFERENCE_PRESSURE_PA))
      const w = 2 * Math.PI * f * tau
      splPh.push(wrapDeg(Math.atan2(hi, hr) + w))
    }
    curves.splDb = spl
    curves.splPhaseDeg = splPh
    let n = 0
    let s = 0
    for (let i = 0; i < freqHz.length; i++) {
      const f = freqHz[i]!
      const val = spl[i]
      if (f >= band[0] && f <= band[1] && val !== null && val !== undefined) {
        s += val
        n++
      }
    }
    params.sensitivityDb = n > 0 ? s / n : null
    // Polarity: mean cosine of the phase in 200 Hz–2 kHz once the impulse's delay is removed.
    const tauPeak = peakIdx / fs
    let c = 0
    let cn = 0
    for (let b = Math.ceil(Math.max(200, fLoValid) / linBinHz); b * linBinHz <= Math.min(2000, fTopValid); b++) {
      const hr = Ha[2 * b]!
      const hi = Ha[2 * b + 1]!
      const ph = Math.atan2(hi, hr) + 2 * Math.PI * b * linBinHz * tauPeak
      c += Math.cos(ph)
      cn++
    }
    const mc = cn > 0 ? c / cn : 0
    flags.polarity = mc > 0.5 ? 'normal' : mc < -0.5 ? 'inverted' : null
    if (flags.polarity === null) notes.push('Polarity undecided: the acoustic phase is not clearly 0° or 180°.')
  } else {
    unmeasured.push('spl', 'sensitivity', 'polarity', 'distortion', 'rub_buzz')
    notes.push(!P ? 'No mic channel: no acoustic result.' : unitDead ? 'No sound: the coil is open or shorted.' : 'The mic channel carries no sound above its noise.')
  }
  timings.response = performance.now() - t

  // ---- Harmonic distortion ----
  t = performance.now()
  const thdAt: ThdAtPoint[] = []
  if (ha && Ha) {
    const L = Math.log(sweep.f2Hz / sweep.f1Hz)
    const specs: { k: number; spec: Float64Array; M: number }[] = []
    for (const k of HARMONIC_ORDERS) {
      const dk = harmonicDelayS(k, sweep) * fs
      const gapAfter = (sweep.durationS * Math.log(k / (k - 1))) / L * fs // to the next lower order
      const gapBefore = (sweep.durationS * Math.log((k + 1) / k)) / L * fs // to the next higher order
      const pre = Math.max(4, Math.round(Math.min(PRE_WINDOW_S * fs, 0.3 * gapBefore)))
      const post = Math.round(0.7 * gapAfter)
      const M = nextPowerOfTwo(pre + post + 1)
      const seg = cutWindow(ha, peakIdx - Math.round(dk), pre, post, M)
      specs.push({ k, spec: rfft(seg, M), M })
    }
    const harmonicPct = (k: number, f: number): number | null => {
      if (f < fLoValid || k * f > fTopValid) return null
      const s = specs[k - 2]!
      const h1 = Math.hypot(...binInterp(Ha, f / linBinHz))
      const hk = Math.hypot(...binInterp(s.spec, (k * f * s.M) / fs))
      return h1 > 0 ? (100 * hk) / h1 : null
    }
    const point = (f: number): ThdAtPoint => {
      const h = HARMONIC_ORDERS.map((k) => harmonicPct(k, f))
      const valid = h.filter((x): x is number => x !== null)
      const thd = h[0] === null ? null : Math.sqrt(valid.reduce((a, x) => a + x * x, 0))
      return { hz: f, thdPct: thd, h2Pct: h[0]!, h3Pct: h[1]!, h4Pct: h[2]!, h5Pct: h[3]!, splDb: null }
    }
    const pts = freqHz.map(point)
    curves.thdPct = pts.map((p) => p.thdPct)
    curves.h2Pct = pts.map((p) => p.h2Pct)
    curves.h3Pct = pts.map((p) => p.h3Pct)
    curves.h4Pct = pts.map((p) => p.h4Pct)
    curves.h5Pct = pts.map((p) => p.h5Pct)
    const splCurve = curves.splDb
    for (const hz of options.thdAtHz ?? DEFAULT_THD_AT_HZ) {
      const p = point(hz)
      const inRange = hz >= fLoValid && hz <= fTopValid
      let spl: number | null = null
      if (inRange && splCurve) {
        // exact value at hz from the same spectrum as the curve
        const i = freqHz.findIndex((f) => f >= hz)
        spl = i > 0 ? interpLog(freqHz[i - 1]!, splCurve[i - 1] ?? null, freqHz[i]!, splCurve[i] ?? null, hz) : null
      }
      thdAt.push({ ...p, splDb: spl })
    }
    params.thdPct = point(1000).thdPct
    let maxThd = -1
    for (let i = 0; i < freqHz.length; i++) {
      const f = freqHz[i]!
      const th = pts[i]!.thdPct
      if (th === null || f < 2 * sweep.f1Hz || 5 * f > fTopValid) continue
      if (th > maxThd) {
        maxThd = th
        params.thdMaxAtHz = f
      }
    }
    params.thdMaxPct = maxThd >= 0 ? maxThd : null
  }
  timings.distortion = performance.now() - t

  // ---- Rub and buzz ----
  t = performance.now()
  if (ha && mic) {
    const rb = rubBuzzLevel(ha, Xa, mic, peakIdx, profile, fs, fTopValid)
    if (rb) {
      params.rubBuzzDb = rb.levelDb
      params.rubBuzzAtHz = rb.atHz
      flags.rubBuzz = rb.levelDb > rbLimit
    } else {
      unmeasured.push('rub_buzz')
    }
  }
  timings.rubBuzz = performance.now() - t

  timings.total = performance.now() - tStart
  return {
    engineVersion: ENGINE_VERSION,
    kind: 'sweep',
    sampleRateHz: fs,
    format: { encoding: v.encoding, bitsPerSample: v.bitsPerSample, channels: v.stats.length, frames: v.frames, extensible: v.extensible },
    timingsMs: timings,
    parameters: params,
    classical,
    curves,
    flags,
    thdAt,
    unmeasured: [...new Set(unmeasured)],
    notes,
  }
}

function interpLog(f0: number, v0: number | null, f1: number, v1: number | null, f: number): number | null {
  if (v0 === null || v1 === null) return null
  const t = Math.log(f / f0) / Math.log(f1 / f0)
  return v0 + (v1 - v0) * t
}

/**
 * Rub-and-buzz level (our metric, see docs/method.md, "Rub and buzz"): the high-order part of the deconvolved
 * response (orders ≥ RUB_BUZZ_MIN_ORDER, which arrive earliest, Farina 2000) is re-convolved
 * with the stimulus, giving the high-order residual in time, band-limited to the buzz band.
 * Per block of two sweep cycles: peak residual over peak mic signal; the level is the worst block.
 */
function rubBuzzLevel(
  ha: Float64Array,
  Xa: Float64Array,
  mic: Float64Array,
  peakIdx: number,
  profile: StationProfile,
  fs: number,
  fTopValid: number,
): { levelDb: number; atHz: number } | null {
  const N = ha.length
  const sweep = profile.sweep
  const rate = sweepRate(sweep)
  const linEnd = Math.round((LINEAR_WINDOW_S + 0.05) * fs)
  // Highest order whose impulse still lands clear of the linear window after wrapping.
  const maxAdvance = (N - linEnd) / fs
  const kMax = Math.exp(maxAdvance * rate)
  const startAdv = harmonicDelayS(RUB_BUZZ_MIN_ORDER, sweep) * fs
  const endAdv = Math.min(maxAdvance * fs, harmonicDelayS(Math.min(kMax, sweep.f2Hz / sweep.f1Hz), sweep) * fs)
  if (endAdv <= startAdv + 16) return null
  const seg = new Float64Array(N)
  const len = Math.round(endAdv - startAdv)
  const taper = Math.max(1, Math.round(0.05 * len))
  for (let i = 0; i < len; i++) {
    let w = 1
    if (i < taper) w = halfHann(i, taper)
    else if (len - 1 - i < taper) w = halfHann(len - 1 - i, taper)
    const src = (((peakIdx - Math.round(endAdv) + i) % N) + N) % N
    seg[src] = ha[src]! * w
  }
  const Hh = rfft(seg, N)
  const binHz = fs / N
  const bLo = Math.ceil(RUB_BUZZ_BAND_LOW_HZ / binHz)
  const bHi = Math.floor(fTopValid / binHz)
  const R = new Float64Array(N + 2)
  for (let b = bLo; b <= bHi; b++) {
    const hr = Hh[2 * b]!
    const hi = Hh[2 * b + 1]!
    const xr = Xa[2 * b]!
    const xi = Xa[2 * b + 1]!
    R[2 * b] = hr * xr - hi * xi
    R[2 * b + 1] = hr * xi + hi * xr
  }
  const r = irfft(R, N)
  // Blocks of two sweep cycles from the end of the fade-in to where order 10 leaves the band.
  const start = Math.round(sweep.preSilenceS * fs) + peakIdx
  const tEnd = Math.log(fTopValid / RUB_BUZZ_MIN_ORDER / sweep.f1Hz) / rate
  const tBegin = Math.log(USABLE_BOTTOM_FACTOR) / rate
  // Reference: the peak of the mic signal over the whole sweep (its loudest fundamental).
  const sweepEndIdx = Math.min(mic.length, start + Math.round(sweep.durationS * fs))
  let pRef = 0
  for (let i = start; i < sweepEndIdx; i++) pRef = Math.max(pRef, Math.abs(mic[i]!))
  if (!(pRef > 0)) return null
  let worst = Number.NEGATIVE_INFINITY
  let worstHz = 0
  let tb = tBegin
  while (tb < Math.min(tEnd, sweep.durationS)) {
    const f = sweep.f1Hz * Math.exp(tb * rate)
    const dur = Math.max(RUB_BUZZ_MIN_BLOCK_S, RUB_BUZZ_BLOCK_CYCLES / f)
    const a = start + Math.round(tb * fs)
    const b = Math.min(mic.length, a + Math.round(dur * fs))
    let pr = 0
    for (let i = a; i < b; i++) {
      const x = Math.abs(r[i]!)
      if (x > pr) pr = x
    }
    if (pr > 0) {
      const lv = 20 * Math.log10(pr / pRef)
      if (lv > worst) {
        worst = lv
        worstHz = sweep.f1Hz * Math.exp((tb + dur / 2) * rate)
      }
    }
    tb += dur
  }
  return Number.isFinite(worst) ? { levelDb: worst, atHz: worstHz } : null
}

/**
 * Analyses an impedance table from an external analyser: same result shape as a sweep,
 * with the acoustic parts null.
 * @throws AnalysisInputError for an unreadable table (codes table_*).
 */
export function analyzeImpedanceTable(text: string, options: Pick<AnalyzeOptions, 'ambientC'> & { ratedOhm?: number } = {}): AnalysisResult {
  const tStart = performance.now()
  const table = parseImpedanceTable(text)
  const tParsed = performance.now()
  const { freqHz: tf, magOhm, phaseDeg } = table
  const fMin = tf[0]!
  const fMax = tf[tf.length - 1]!
  const grid = standardGrid(fMax, Math.max(10, fMin))
  const params = emptyParameters(DEFAULT_SENSITIVITY_BAND_HZ, RUB_BUZZ_LIMIT_DB)
  const curves = emptyCurves(grid)
  const re = phaseDeg ? magOhm.map((m, i) => m * Math.cos((phaseDeg[i]! * Math.PI) / 180)) : null
  const im = phaseDeg ? magOhm.map((m, i) => m * Math.sin((phaseDeg[i]! * Math.PI) / 180)) : null
  // Same fit band as for sweeps.
  const idx = tf.map((f, i) => i).filter((i) => tf[i]! <= FIT_HIGH_HZ)
  const pick = <T>(a: T[]): T[] => idx.map((i) => a[i]!)
  const flags: AnalysisFlags = { polarity: null, openCoil: false, shortedCoil: false, clippedChannels: [], lowSnrChannels: [], rubBuzz: null, noResonance: false }
  const notes = ['Impedance table: no acoustic result.']
  const unmeasured = ['spl', 'sensitivity', 'polarity', 'distortion', 'rub_buzz']
  // Coil continuity from the table itself: its lowest magnitude is the coil's resistance or less.
  const lowestOhm = Math.min(...magOhm)
  flags.openCoil = lowestOhm > OPEN_COIL_OHM
  flags.shortedCoil = lowestOhm < SHORTED_COIL_OHM
  if (flags.openCoil) notes.push(`Open coil: the table reads at least ${lowestOhm.toPrecision(3)} Ω at every frequency.`)
  if (flags.shortedCoil) notes.push(`Shorted coil: the table reads ${lowestOhm.toPrecision(3)} Ω at its lowest.`)
  const tFit = performance.now()
  const fitData = { freqHz: pick(tf), re: re && pick(re), mag: pick(magOhm) }
  const unitDead = flags.openCoil || flags.shortedCoil
  const gated = unitDead
    ? { fig: { fit: null, classical: null }, note: 'Impedance not fitted: the coil is open or shorted.' }
    : gateLowResonance(fitImpedance(fitData.freqHz, fitData.re, im && pick(im), fitData.mag), fitData, 'table')
  const { fig, note } = gated
  applyFit(params, fig, options.ambientC)
  const fitMs = performance.now() - tFit
  curves.impedanceOhm = grid.map((f) => interpTable(tf, magOhm, f))
  curves.impedancePhaseDeg = phaseDeg ? grid.map((f) => interpTable(tf, phaseDeg, f)) : null
  if (params.fsHz) {
    const zm = zminAbove(grid, curves.impedanceOhm, params.fsHz)
    if (zm) {
      params.zminOhm = zm.z
      params.fZminHz = zm.f
    }
  }
  if (!fig.fit) {
    unmeasured.push('small_signal')
    flags.noResonance = showsNoResonance(gated, fitData.mag)
    notes.push(note ?? NO_RESONANCE_NOTE)
  }
  if (!phaseDeg) notes.push('No phase column: the fit used the magnitude only.')
  const total = performance.now() - tStart
  return {
    engineVersion: ENGINE_VERSION,
    kind: 'impedance_table',
    sampleRateHz: null,
    format: null,
    timingsMs: { validate: tParsed - tStart, deconvolve: 0, impedance: 0, fit: fitMs, response: 0, distortion: 0, rubBuzz: 0, total },
    parameters: params,
    classical: fig.classical,
    curves,
    flags,
    thdAt: [],
    unmeasured,
    notes,
  }
}

function interpTable(f: number[], v: number[], x: number): number | null {
  if (x < f[0]! || x > f[f.length - 1]!) return null
  let lo = 0
  let hi = f.length - 1
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1
    if (f[mid]! <= x) lo = mid
    else hi = mid
  }
  if (lo === hi) return v[lo]!
  const t = Math.log(x / f[lo]!) / Math.log(f[hi]! / f[lo]!)
  return v[lo]! + (v[hi]! - v[lo]!) * t
}

