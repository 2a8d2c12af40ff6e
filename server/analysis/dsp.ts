/** Small signal-processing helpers the stages share: spectral division, windows, phase wrapping. */
import { REGULARISATION, TAPER_FRACTION } from './constants.ts'

/** Y·conj(X) / (|X|² + ε): regularised spectral division of two interleaved spectra. */
export function divide(Y: Float64Array, X: Float64Array): Float64Array {
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

/** a + sign·b, element by element. */
export function addSpectra(a: Float64Array, b: Float64Array, sign = 1): Float64Array {
  const out = new Float64Array(a.length)
  for (let i = 0; i < a.length; i++) out[i] = a[i]! + sign * b[i]!
  return out
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
export function cutWindow(h: Float64Array, origin: number, preSamples: number, postSamples: number, M: number): Float64Array {
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
