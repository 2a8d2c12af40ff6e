/**
 * The noise floor of the deconvolved acoustic response, per frequency band, and what it means for
 * the figures read from it. The deconvolved response holds the unit's linear response near time 0,
 * its harmonic responses before it, and between the two (after the linear response has died away,
 * before the highest harmonic that can carry anything) only what the microphone heard that the
 * sweep did not cause: the hall's noise, hum, the converter's own noise. A window there, shaped like
 * the linear window, gives the noise each figure carries.
 */

/** Width of the bands the noise is averaged over (one-sixth octave: narrow enough to follow a hum line's neighbourhood). */
export const NOISE_BAND_OCT = 1 / 6
/** Coverage factor of the uncertainties: k = 2, about 95 % (JCGM 100:2008, GUM, 6.3). */
export const COVERAGE_K = 2
/**
 * A harmonic (or the THD they make) is measured only when it stands this far above the THD the
 * noise alone reads; otherwise it is reported as below that bound (our margin: 10 dB, 3.16×).
 */
export const THD_CLEAR_RATIO = Math.sqrt(10)

/**
 * RMS amplitude of an interleaved real spectrum (length M + 2) over the band f·2^(±NOISE_BAND_OCT/2),
 * at least three bins wide.
 */
export function bandRms(spec: Float64Array, M: number, fs: number, f: number): number {
  const binHz = fs / M
  const half = Math.pow(2, NOISE_BAND_OCT / 2)
  const centre = Math.round(f / binHz)
  const lo = Math.max(1, Math.min(centre - 1, Math.floor(f / half / binHz)))
  const hi = Math.min(M / 2, Math.max(centre + 1, Math.ceil((f * half) / binHz)))
  let p = 0
  for (let b = lo; b <= hi; b++) p += spec[2 * b]! * spec[2 * b]! + spec[2 * b + 1]! * spec[2 * b + 1]!
  return Math.sqrt(p / (hi - lo + 1))
}

/** Where in the deconvolved response (length N) the noise window lies: origin and samples after it, or null when nothing fits. */
export function noiseWindowPlace(N: number, linearEnd: number, pre: number, post: number, harmonicSpan: number): { origin: number; post: number } | null {
  const origin = linearEnd + pre
  const room = N - harmonicSpan - pre - origin
  if (room < post / 4) return null
  return { origin, post: Math.min(post, room) }
}

/**
 * Uncertainty (dB, k = COVERAGE_K) of a level read from a spectrum value of amplitude `signal`
 * carrying noise of RMS amplitude `noise` in the same scale.
 */
export function levelUncertaintyDb(signal: number, noise: number): number | null {
  if (!(signal > 0)) return null
  return 20 * Math.log10(1 + (COVERAGE_K * noise) / signal)
}
