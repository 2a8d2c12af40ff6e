/**
 * The noise floor of the deconvolved acoustic response, per frequency band, and what it means for
 * the figures read from it. The deconvolved response holds the unit's linear response near time 0,
 * its harmonic responses before it (wrapped round to the end), and between the two (after the
 * linear response has died away, before the highest harmonic that can carry anything) only what the
 * microphone heard that the sweep did not cause: the hall's noise, what is left of hum, a knock, the
 * converter's own noise. A window there, shaped like the linear window, gives the noise each figure
 * carries: scaled by the energy of the window a figure is read through (white noise passes a
 * window in proportion to the sum of its squared weights), it is the noise in that figure's spectrum.
 * The judge reads figures with the uncertainties and floors made from it.
 */
import { windowEnergy, windowSpectrum } from './dsp.ts'
import { nextPowerOfTwo } from './fft.ts'

/** Width of the bands the noise is averaged over (one-sixth octave: narrow enough to follow a hum line's neighbourhood). */
export const NOISE_BAND_OCT = 1 / 6
/** Fewest bins a band is averaged over (an estimate from fewer scatters too much). */
const NOISE_BAND_MIN_BINS = 3
/** Coverage factor of the uncertainties: k = 2, about 95 % (JCGM 100:2008, GUM, 6.3). */
export const COVERAGE_K = 2
/**
 * A harmonic (or the THD they make) is measured only when it stands this far above the THD the
 * noise alone reads; otherwise it is reported as below that bound (our margin: 10 dB, 3.16×).
 */
export const THD_CLEAR_RATIO = Math.sqrt(10)

/**
 * Uncertainty (dB, k = COVERAGE_K) of a level read from a spectrum value of amplitude `signal`
 * carrying noise of RMS amplitude `noise` in the same scale.
 */
export function levelUncertaintyDb(signal: number, noise: number): number | null {
  if (!(signal > 0)) return null
  return 20 * Math.log10(1 + (COVERAGE_K * noise) / signal)
}

/**
 * Where in the deconvolved response (length N) the noise window lies: its origin and the samples
 * after it (as cutWindow takes them), or null when nothing fits. It starts `pre` after the linear
 * window's end and stops `pre` short of the harmonic responses, which take up the last
 * `harmonicSpan` samples; it is as long as the linear window (`post`) when there is room.
 */
function noiseWindowPlace(N: number, linearEnd: number, pre: number, post: number, harmonicSpan: number): { origin: number; post: number } | null {
  const origin = linearEnd + pre
  const room = N - harmonicSpan - pre - origin
  if (room < post / 4) return null
  return { origin, post: Math.min(post, room) }
}

/** The noise of a deconvolved response, by frequency band. */
export class NoiseSpectrum {
  private readonly binHz: number
  private readonly half: number
  /** Cumulative |bin|² (prefix sums), so any band's mean costs two reads. */
  private readonly cumulative: Float64Array

  private constructor(
    spec: Float64Array,
    private readonly M: number,
    fs: number,
    /** Energy of the window the noise was cut with. */
    private readonly energy: number,
  ) {
    this.binHz = fs / M
    this.half = Math.pow(2, NOISE_BAND_OCT / 2)
    this.cumulative = new Float64Array(M / 2 + 2)
    for (let b = 0; b <= M / 2; b++) this.cumulative[b + 1] = this.cumulative[b]! + spec[2 * b]! * spec[2 * b]! + spec[2 * b + 1]! * spec[2 * b + 1]!
  }

  /**
   * The noise window of `h` (see noiseWindowPlace) with the linear window's lead-in `pre` and
   * length `post`; null when the response has no room for it.
   */
  static of(h: Float64Array, fs: number, linearEnd: number, pre: number, post: number, harmonicSpan: number): NoiseSpectrum | null {
    const place = noiseWindowPlace(h.length, linearEnd, pre, post, harmonicSpan)
    if (!place) return null
    const M = nextPowerOfTwo(pre + place.post)
    return new NoiseSpectrum(windowSpectrum(h, place.origin, pre, place.post, M), M, fs, windowEnergy(pre, place.post))
  }

  /**
   * RMS amplitude of the noise over the band f·2^(±NOISE_BAND_OCT/2) (at least NOISE_BAND_MIN_BINS
   * bins wide), as it shows in the spectrum of a window of the given energy (windowEnergy).
   */
  at(f: number, energy: number): number {
    const centre = Math.round(f / this.binHz)
    const side = (NOISE_BAND_MIN_BINS - 1) / 2
    const lo = Math.max(1, Math.min(centre - side, Math.floor(f / this.half / this.binHz)))
    const hi = Math.min(this.M / 2, Math.max(centre + side, Math.ceil((f * this.half) / this.binHz)))
    if (hi < lo) return 0
    const p = (this.cumulative[hi + 1]! - this.cumulative[lo]!) / (hi - lo + 1)
    return Math.sqrt((p * energy) / this.energy)
  }
}

