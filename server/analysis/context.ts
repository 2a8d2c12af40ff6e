/**
 * The one typed context the stages of a sweep analysis pass along (see analyze.ts for their order).
 * The inputs are fixed when the context is made; each stage fills in the fields it owns and reads
 * only those of the stages before it, so a stage can be tested alone by building a context,
 * running the stages before it, and looking at what it wrote.
 */
import type { ChannelRole, StationProfile } from '../../shared/utils/station-profile.ts'
import { nextPowerOfTwo } from './fft.ts'
import { standardGrid } from './grid.ts'
import type { ClassicalResult, FitResult } from './small-signal.ts'
import type { AnalysisCurves, AnalysisFlags, AnalysisParameters, AnalysisTimings, AnalyzeOptions, PerChannel, ThdAtPoint } from './types.ts'
import type { ChannelStats, ValidatedRecording } from './validate.ts'
import type { PlayedStimulus } from './level.ts'
import type { NoiseSpectrum } from './noise-floor.ts'
import {
  ANALYSIS_NYQUIST_FRACTION,
  DEFAULT_SENSITIVITY_BAND_HZ,
  LINEAR_WINDOW_S,
  LOW_SNR_DB,
  PRE_WINDOW_S,
  RUB_BUZZ_LIMIT_DB,
  USABLE_BOTTOM_FACTOR,
  USABLE_TOP_FRACTION,
} from './constants.ts'

/** The decoded channels, in volts at the station's input; null where the profile has none. */
export interface SweepChannels {
  mic: Float64Array | null
  drive: Float64Array | null
  sense: Float64Array | null
}

/** The analysis band and the linear windows' lengths, fixed by the profile and the sample rate. */
export interface SweepWindows {
  /** Lowest and highest frequency reported (clear of the sweep's fades and the converter's band edge), Hz. */
  fLoValid: number
  fTopValid: number
  /** Samples of a linear window ahead of its impulse, and after it. */
  preN: number
  linN: number
  /** Length of the short transform of a windowed linear response, and its bin spacing in Hz. */
  M: number
  linBinHz: number
}

/** Spectra (length N, interleaved re/im) of the recorded channels, from the deconvolve stage. */
export interface SweepSpectra {
  /** Microphone. */
  P: Float64Array | null
  /** Sense-resistor voltage (the current × R). */
  Xs: Float64Array | null
  /**
   * The amplifier's output: the stimulus as played (drive + sense, or regenerated). The terminal
   * voltage's spectrum is Xa − Xs (the transform is linear), read so where it is needed.
   */
  Xa: Float64Array
}

/** The small-signal fit on the measured impedance, and why it was withheld if it was. */
export interface FitOutcome {
  fit: FitResult | null
  classical: ClassicalResult | null
  /** Why a fit was withheld (resonance too close to the bottom of the data), or null. */
  withheldNote: string | null
  /** The impedance magnitude at the fitted points (for the no-resonance diagnosis), Ω. */
  fittedMagOhm: number[]
}

/** The acoustic impulse response, from the response stage. */
export interface AcousticResponse {
  /** Deconvolved mic response over the played stimulus, length N (harmonic impulses wrap to the end). */
  ha: Float64Array
  /** Spectrum (length M) of its windowed linear part. */
  Ha: Float64Array
  /** Index in `ha` of the linear impulse's peak (the acoustic delay). */
  peakIdx: number
  /** The noise `ha` carries, by band (noise-floor.ts); null when the response has no room for its window. */
  noise: NoiseSpectrum | null
}

export interface SweepContext {
  // ---- inputs ----
  readonly recording: ValidatedRecording
  readonly profile: StationProfile
  readonly options: AnalyzeOptions
  /** Sample rate, Hz. */
  readonly fs: number
  /** Transform length: the analysed frames padded to a power of two. */
  readonly N: number
  readonly channels: SweepChannels
  /** Sense resistor, Ω. */
  readonly senseOhm: number
  readonly sensitivityBandHz: [number, number]
  readonly rubBuzzLimitDb: number
  /** The curves' frequency grid, Hz. */
  readonly freqHz: number[]
  readonly windows: SweepWindows
  // ---- built by the stages ----
  /** condition: the stimulus as played (the amplifier's output), null without a drive channel. */
  played: PlayedStimulus | null
  /** diagnose (coil continuity): the coil is open or shorted, so nothing electrical or acoustic is measured. */
  unitDead: boolean
  /** deconvolve */
  spectra: SweepSpectra | null
  /** impedance: windowed admittance × R (spectrum of length M), null when not measured. */
  admittance: Float64Array | null
  /** fit */
  fit: FitOutcome | null
  /** response: null when the mic carries no sound. */
  acoustic: AcousticResponse | null
  params: AnalysisParameters
  curves: AnalysisCurves
  flags: AnalysisFlags
  classical: ClassicalResult | null
  thdAt: ThdAtPoint[]
  /** Names of the figures that could not be measured (see `notes` for why). */
  unmeasured: string[]
  notes: string[]
  timings: AnalysisTimings
}

export function emptyParameters(band: [number, number], limit: number): AnalysisParameters {
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

export function emptyCurves(freqHz: number[]): AnalysisCurves {
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

export function emptyTimings(): AnalysisTimings {
  return { validate: 0, condition: 0, deconvolve: 0, impedance: 0, fit: 0, response: 0, distortion: 0, rubBuzz: 0, total: 0 }
}

/** The analysis band and window lengths for a sweep at sample rate fs. */
export function sweepWindows(profile: StationProfile, fs: number, N: number): SweepWindows {
  const sweep = profile.sweep
  const preN = Math.round(PRE_WINDOW_S * fs)
  const linN = Math.round(LINEAR_WINDOW_S * fs)
  // The windowed linear responses are short: a smaller transform of them is enough.
  const M = Math.min(N, nextPowerOfTwo(2 * (preN + linN)))
  return {
    fLoValid: sweep.f1Hz * USABLE_BOTTOM_FACTOR,
    fTopValid: Math.min(sweep.f2Hz * USABLE_TOP_FRACTION, ANALYSIS_NYQUIST_FRACTION * 0.5 * fs),
    preN,
    linN,
    M,
    linBinHz: fs / M,
  }
}

/** A fresh context for a validated recording under a parsed profile: inputs set, nothing measured yet. */
export function createSweepContext(v: ValidatedRecording, profile: StationProfile, options: AnalyzeOptions): SweepContext {
  const fs = v.sampleRate
  const N = nextPowerOfTwo(v.analysisFrames)
  const band = options.sensitivityBandHz ?? DEFAULT_SENSITIVITY_BAND_HZ
  const rbLimit = options.rubBuzzLimitDb ?? RUB_BUZZ_LIMIT_DB
  const freqHz = standardGrid(profile.sweep.f2Hz)
  const params = emptyParameters(band, rbLimit)
  for (const s of v.stats) {
    params.snrDb[s.role] = s.snrDb
    params.peakDbfs[s.role] = s.peakDbfs
  }
  const timings = emptyTimings()
  timings.validate = v.validationMs
  return {
    recording: v,
    profile,
    options,
    fs,
    N,
    channels: { mic: v.channels.mic ?? null, drive: v.channels.drive ?? null, sense: v.channels.sense ?? null },
    senseOhm: profile.senseResistorOhm,
    sensitivityBandHz: band,
    rubBuzzLimitDb: rbLimit,
    freqHz,
    windows: sweepWindows(profile, fs, N),
    unitDead: false,
    played: null,
    spectra: null,
    admittance: null,
    fit: null,
    acoustic: null,
    params,
    curves: emptyCurves(freqHz),
    flags: {
      polarity: null,
      openCoil: false,
      shortedCoil: false,
      clippedChannels: v.stats.filter((s) => s.clipped).map((s) => s.role),
      lowSnrChannels: v.stats.filter((s) => s.snrDb !== null && s.snrDb < LOW_SNR_DB).map((s) => s.role),
      rubBuzz: null,
      noResonance: false,
    },
    classical: null,
    thdAt: [],
    unmeasured: [],
    notes: [],
    timings,
  }
}

/** The validation's figures for one channel, if the profile has it. */
export function channelStat(ctx: SweepContext, role: ChannelRole): ChannelStats | undefined {
  return ctx.recording.stats.find((s) => s.role === role)
}
