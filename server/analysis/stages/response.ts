/**
 * Response: the acoustic impulse response (mic over the played stimulus), its delay, the SPL curve
 * referred to 2.83 V at 1 m, the sensitivity (mean SPL over the band) and the polarity.
 *
 * With a sense channel the stimulus is the amplifier's output, not the terminal voltage; the
 * response is referred to the terminals by Xa/Xd = (Z + R)/Z = 1 + Y·R from the impedance stage.
 */
import type { SweepContext } from '../context.ts'
import { channelStat } from '../context.ts'
import { HARMONIC_SPAN_MARGIN, NO_SOUND_SNR_DB, REFERENCE_DISTANCE_M, REFERENCE_DRIVE_V, REFERENCE_PRESSURE_PA, speedOfSoundMs } from '../constants.ts'
import { impulseResponse, windowEnergy, windowSpectrum, wrapDeg } from '../dsp.ts'
import { levelUncertaintyDb, NOISE_BAND_OCT, NoiseSpectrum } from '../noise-floor.ts'
import { binInterp } from '../fft.ts'

/**
 * The acoustic impulse is the largest sample of the response within this time of the drive: a mic
 * up to about 17 m away at 343 m/s. A station's mic is far closer; the bound keeps the search clear
 * of the harmonic impulses, which wrap round to the end of the response.
 */
export const ACOUSTIC_SEARCH_S = 0.05
/**
 * Band of the polarity decision (common practice): above the resonance, where a direct radiator
 * moves as a piston and its phase, once the delay is removed, stays near 0° (normal) or 180°
 * (inverted); below the cone's break-up and the phase wander of the mic's position.
 */
export const POLARITY_BAND_HZ: readonly [number, number] = [200, 2000]
/**
 * Mean cosine of that phase beyond which the polarity is decided (our choice: ±0.5 is a phase
 * within about ±60° of 0° or 180° on average); in between it is left undecided.
 */
export const POLARITY_MIN_COSINE = 0.5
/** Ambient temperature assumed for the sound's travel time when none is given, °C. */
const DEFAULT_AMBIENT_C = 20

export function response(ctx: SweepContext): void {
  const { N, fs, freqHz, params, curves, flags, notes, profile } = ctx
  const { fLoValid, fTopValid, preN, linN, M, linBinHz } = ctx.windows
  const P = ctx.spectra?.P ?? null
  const micStat = channelStat(ctx, 'mic')
  const hasSound = P !== null && micStat !== undefined && !ctx.unitDead && (micStat.snrDb === null || micStat.snrDb >= NO_SOUND_SNR_DB)
  if (!P || !hasSound || !ctx.spectra) {
    ctx.unmeasured.push('spl', 'sensitivity', 'polarity', 'distortion', 'rub_buzz')
    notes.push(!P ? 'No mic channel: no acoustic result.' : ctx.unitDead ? 'No sound: the coil is open or shorted.' : 'The mic channel carries no sound above its noise.')
    return
  }
  const ha = impulseResponse(P, ctx.spectra.Xa, N)
  const searchN = Math.min(N, Math.round(ACOUSTIC_SEARCH_S * fs))
  let best = 0
  let peakIdx = 0
  for (let i = 0; i < searchN; i++) {
    const a = Math.abs(ha[i]!)
    if (a > best) {
      best = a
      peakIdx = i
    }
  }
  params.acousticDelayMs = (1000 * peakIdx) / fs
  const Ha = windowSpectrum(ha, 0, preN, linN, M)
  const noise = NoiseSpectrum.of(ha, fs, linN, preN, linN, Math.ceil(HARMONIC_SPAN_MARGIN * profile.sweep.durationS * fs))
  const linEnergy = windowEnergy(preN, linN)
  ctx.acoustic = { ha, Ha, peakIdx, noise }

  const sensScale = (REFERENCE_DRIVE_V * (profile.micDistanceM / REFERENCE_DISTANCE_M)) / profile.micSensitivityVPerPa
  const tau = profile.micDistanceM / speedOfSoundMs(ctx.options.ambientC ?? DEFAULT_AMBIENT_C)
  const Yw = ctx.admittance
  const spl: (number | null)[] = []
  const splPh: (number | null)[] = []
  const splU: (number | null)[] = []
  for (const f of freqHz) {
    if (f < fLoValid || f > fTopValid) {
      spl.push(null)
      splPh.push(null)
      splU.push(null)
      continue
    }
    const b = f / linBinHz
    let [hr, hi] = binInterp(Ha, b)
    // The terminal correction below scales the response and its noise alike: the ratio stays.
    splU.push(noise ? levelUncertaintyDb(Math.hypot(hr, hi), noise.at(f, linEnergy)) : null)
    if (Yw !== null) {
      const [yr, yi] = binInterp(Yw, b)
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
  if (noise) params.splUncertaintyDb = splU

  const band = ctx.sensitivityBandHz
  let n = 0
  let s = 0
  let uSq = 0
  for (let i = 0; i < freqHz.length; i++) {
    const f = freqHz[i]!
    const val = spl[i]
    if (f >= band[0] && f <= band[1] && val !== null && val !== undefined) {
      s += val
      uSq += (splU[i] ?? 0) ** 2
      n++
    }
  }
  params.sensitivityDb = n > 0 ? s / n : null
  // The mean over the band averages the noise of its independent bands (NOISE_BAND_OCT wide each):
  // the uncertainty of a mean of m independent readings is their RMS uncertainty over √m (GUM 4.2.3).
  if (noise && n > 0) {
    const bands = Math.max(1, Math.log2(band[1] / band[0]) / NOISE_BAND_OCT)
    params.sensitivityUncertaintyDb = Math.sqrt(uSq / n / bands)
  }

  // Polarity: mean cosine of the phase over the polarity band once the impulse's delay is removed.
  const tauPeak = peakIdx / fs
  let c = 0
  let cn = 0
  for (let b = Math.ceil(Math.max(POLARITY_BAND_HZ[0], fLoValid) / linBinHz); b * linBinHz <= Math.min(POLARITY_BAND_HZ[1], fTopValid); b++) {
    const ph = Math.atan2(Ha[2 * b + 1]!, Ha[2 * b]!) + 2 * Math.PI * b * linBinHz * tauPeak
    c += Math.cos(ph)
    cn++
  }
  const mc = cn > 0 ? c / cn : 0
  flags.polarity = mc > POLARITY_MIN_COSINE ? 'normal' : mc < -POLARITY_MIN_COSINE ? 'inverted' : null
  if (flags.polarity === null) notes.push('Polarity undecided: the acoustic phase is not clearly 0° or 180°.')
}
