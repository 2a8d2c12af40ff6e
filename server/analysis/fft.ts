import FFT from 'fft.js'

/**
 * Real FFT helpers on top of fft.js (radix-4). Spectra are interleaved complex arrays holding
 * bins 0…n/2 (length n + 2). The inverse uses the half-length complex transform
 * (even/odd packing), about twice as fast as a full complex inverse.
 */

const plans = new Map<number, FFT>()

function plan(size: number): FFT {
  let p = plans.get(size)
  if (p === undefined) {
    p = new FFT(size)
    plans.set(size, p)
  }
  return p
}

export function isPowerOfTwo(n: number): boolean {
  return Number.isInteger(n) && n >= 2 && (n & (n - 1)) === 0
}

export function nextPowerOfTwo(n: number): number {
  let p = 2
  while (p < n) p *= 2
  return p
}

/** Forward real FFT of `x` zero-padded (or truncated) to `n` (a power of two ≥ 4). */
export function rfft(x: ArrayLike<number>, n: number): Float64Array {
  if (!isPowerOfTwo(n) || n < 4) throw new RangeError(`FFT length ${n} is not a power of two ≥ 4`)
  let input: Float64Array
  if (x instanceof Float64Array && x.length === n) input = x
  else {
    input = new Float64Array(n)
    const m = Math.min(n, x.length)
    for (let i = 0; i < m; i++) input[i] = x[i]!
  }
  const out = new Float64Array(2 * n)
  plan(n).realTransform(out, input)
  return out.subarray(0, n + 2)
}

/** Inverse of `rfft`: bins 0…n/2 (interleaved) to n real samples, normalised by 1/n. */
export function irfft(spec: Float64Array, n: number): Float64Array {
  if (!isPowerOfTwo(n) || n < 4) throw new RangeError(`FFT length ${n} is not a power of two ≥ 4`)
  const m = n / 2
  const z = new Float64Array(2 * m)
  // E[k] = (X[k] + conj X[m−k]) / 2,  O[k] = (X[k] − conj X[m−k]) · e^{+2πik/n} / 2,  Z = E + i·O
  for (let k = 0; k < m; k++) {
    const xr = spec[2 * k]!
    const xi = spec[2 * k + 1]!
    const yr = spec[2 * (m - k)]!
    const yi = -spec[2 * (m - k) + 1]!
    const er = 0.5 * (xr + yr)
    const ei = 0.5 * (xi + yi)
    const dr = 0.5 * (xr - yr)
    const di = 0.5 * (xi - yi)
    const a = (2 * Math.PI * k) / n
    const c = Math.cos(a)
    const s = Math.sin(a)
    const or = dr * c - di * s
    const oi = dr * s + di * c
    z[2 * k] = er - oi
    z[2 * k + 1] = ei + or
  }
  const zt = new Float64Array(2 * m)
  plan(m).inverseTransform(zt, z)
  const out = new Float64Array(n)
  for (let j = 0; j < m; j++) {
    out[2 * j] = zt[2 * j]!
    out[2 * j + 1] = zt[2 * j + 1]!
  }
  return out
}

/** Magnitude of bin k of an interleaved spectrum. */
export function binAbs(spec: Float64Array, k: number): number {
  return Math.hypot(spec[2 * k]!, spec[2 * k + 1]!)
}

/** Linear interpolation of the complex spectrum at fractional bin `b`; returns [re, im]. */
export function binInterp(spec: Float64Array, b: number): [number, number] {
  const last = spec.length / 2 - 1
  if (b <= 0) return [spec[0]!, spec[1]!]
  if (b >= last) return [spec[2 * last]!, spec[2 * last + 1]!]
  const k = Math.floor(b)
  const t = b - k
  return [
    spec[2 * k]! * (1 - t) + spec[2 * k + 2]! * t,
    spec[2 * k + 1]! * (1 - t) + spec[2 * k + 3]! * t,
  ]
}
