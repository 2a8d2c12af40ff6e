/** Small signal-processing helpers the stages share: spectral division, windows, phase wrapping. */
import { REGULARISATION, TAPER_FRACTION } from './constants.ts'
import { irfft, rfft, workBuffer } from './fft.ts'

/**
 * The impulse response (length N) of Y over X: the inverse transform of the regularised spectral
 * division Y·conj(X) / (|X|² + ε). With `minus`, X − minus stands for X. Written into `out`.
 */
export function impulseResponse(Y: Float64Array, X: Float64Array, N: number, minus?: Float64Array, out: Float64Array = new Float64Array(N)): Float64Array {
  let D = X
  if (minus) {
    D = workBuffer('divisor', X.length)
    for (let i = 0; i < X.length; i++) D[i] = X[i]! - minus[i]!
  }
  let maxP = 0
  for (let i = 0; i < D.length; i += 2) {
    const p = D[i]! * D[i]! + D[i + 1]! * D[i + 1]!
    if (p > maxP) maxP = p
  }
  const eps = REGULARISATION * maxP
  const quotient = workBuffer('quotient', D.length)
  for (let i = 0; i < D.length; i += 2) {
    const xr = D[i]!
    const xi = D[i + 1]!
    const yr = Y[i]!
    const yi = Y[i + 1]!
    const inv = 1 / (xr * xr + xi * xi + eps)
    quotient[i] = (yr * xr + yi * xi) * inv
    quotient[i + 1] = (yi * xr - yr * xi) * inv
  }
  return irfft(quotient, N, out)
}

/** Rising half-Hann taper: 0 at i = 0, 1 at i = n. */
export function halfHann(i: number, n: number): number {
  return 0.5 - 0.5 * Math.cos((Math.PI * i) / n)
}

/**
 * Cuts [start, start+len) out of the circular impulse response `h` (length N), with half-Hann
 * tapers, into a buffer of length M; sample `origin` of the response lands at index 0 and
 * earlier samples wrap to the end, so phases stay referred to `origin`.
 */
export function cutWindow(h: Float64Array, origin: number, preSamples: number, postSamples: number, M: number, out: Float64Array = new Float64Array(M)): Float64Array {
  const N = h.length
  const shape = windowShape(preSamples, postSamples)
  let src = (((origin - preSamples) % N) + N) % N
  let dst = (((-preSamples) % M) + M) % M
  for (let i = -preSamples; i < postSamples; i++) {
    out[dst] = h[src]! * shape(i)
    if (++src === N) src = 0
    if (++dst === M) dst = 0
  }
  return out
}

/** The spectrum (length M + 2) of cutWindow's cut: the window itself lives in a reused buffer. */
export function windowSpectrum(h: Float64Array, origin: number, preSamples: number, postSamples: number, M: number): Float64Array {
  return rfft(cutWindow(h, origin, preSamples, postSamples, M, workBuffer('window', M).fill(0)), M)
}

/**
 * Sum of the squared weights of cutWindow's window: the share of white noise it lets through. In
 * closed form: a half-Hann taper of T ≥ 2 samples, w_j = (1 − cos(πj/T))/2, has Σw² = 3T/8 − 1/2,
 * since Σcos(πj/T) = 1 and Σcos(2πj/T) = 0 over j = 0…T−1 (geometric sums of e^{iπj/T}).
 */
export function windowEnergy(preSamples: number, postSamples: number): number {
  const { taperPre, taperPost } = tapers(preSamples, postSamples)
  const taperEnergy = (t: number) => (t >= 2 ? (3 * t) / 8 - 0.5 : 0)
  return preSamples + postSamples - taperPre - taperPost + taperEnergy(taperPre) + taperEnergy(taperPost)
}

/** Lengths of cutWindow's tapers ahead of and after the impulse. */
function tapers(preSamples: number, postSamples: number): { taperPre: number; taperPost: number } {
  return { taperPre: Math.max(1, Math.round(preSamples * TAPER_FRACTION * 2)), taperPost: Math.max(1, Math.round(postSamples * TAPER_FRACTION)) }
}

/** cutWindow's weight at sample i (−pre ≤ i < post): flat, with half-Hann tapers at both ends. */
function windowShape(preSamples: number, postSamples: number): (i: number) => number {
  const { taperPre, taperPost } = tapers(preSamples, postSamples)
  return (i) => {
    let w = 1
    const fromStart = i + preSamples
    if (fromStart < taperPre) w *= halfHann(fromStart, taperPre)
    const toEnd = postSamples - 1 - i
    if (toEnd < taperPost) w *= halfHann(toEnd, taperPost)
    return w
  }
}

/** An angle in radians as degrees in [−180, 180). */
export function wrapDeg(rad: number): number {
  let d = (rad * 180) / Math.PI
  d = ((((d + 180) % 360) + 360) % 360) - 180
  return d
}

/** Value at f between (f0, v0) and (f1, v1), linear in log frequency; null when either end is. */
export function interpLog(f0: number, v0: number | null, f1: number, v1: number | null, f: number): number | null {
  if (v0 === null || v1 === null) return null
  const t = Math.log(f / f0) / Math.log(f1 / f0)
  return v0 + (v1 - v0) * t
}
