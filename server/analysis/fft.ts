import FFT from 'fft.js'

/**
 * Real FFT helpers on top of fft.js (radix-4). Spectra are interleaved complex arrays holding
 * bins 0…n/2 (length n + 2). The inverse uses the half-length complex transform
 * (even/odd packing), about twice as fast as a full complex inverse.
 */

const plans = new Map<number, FFT>()
/** Scratch buffers and twiddles per size: the transforms run many times per recording. */
const scratch = new Map<number, { input: Float64Array; out: Float64Array }>()
const twiddles = new Map<number, { cos: Float64Array; sin: Float64Array }>()
const inverseScratch = new Map<number, Float64Array>()
/**
 * Work buffers the stages reuse from one recording to the next, by length and name: a temporary the
 * size of a transform costs more to allocate (fresh pages, then the collector) than to fill.
 */
const work = new Map<number, Map<string, Float64Array>>()

/**
 * A reused buffer of `length` for the temporary `name`. It holds whatever its last user left: fill
 * what is read. Valid until the next call with the same name and length.
 */
export function workBuffer(name: string, length: number): Float64Array {
  let byName = work.get(length)
  if (byName === undefined) {
    byName = new Map()
    work.set(length, byName)
  }
  let b = byName.get(name)
  if (b === undefined) {
    b = new Float64Array(length)
    byName.set(name, b)
  }
  return b
}

function scratchFor(n: number): { input: Float64Array; out: Float64Array } {
  let s = scratch.get(n)
  if (s === undefined) {
    s = { input: new Float64Array(n), out: new Float64Array(2 * n) }
    scratch.set(n, s)
  }
  return s
}

function twiddlesFor(n: number): { cos: Float64Array; sin: Float64Array } {
  let t = twiddles.get(n)
  if (t === undefined) {
    const m = n / 2
    t = { cos: new Float64Array(m), sin: new Float64Array(m) }
    for (let k = 0; k < m; k++) {
      t.cos[k] = Math.cos((2 * Math.PI * k) / n)
      t.sin[k] = Math.sin((2 * Math.PI * k) / n)
    }
    twiddles.set(n, t)
  }
  return t
}

function plan(size: number): FFT {
  let p = plans.get(size)
  if (p === undefined) {
    p = new FFT(size)
    plans.set(size, p)
  }
  return p
}

/**
 * Drops the plans and scratch buffers kept for transforms longer than `aboveLength`. A long
 * recording's transforms keep hundreds of MB this way, and the next recording may be short: the
 * worker calls this after each recording, so what one recording needed is not kept for the rest.
 */
export function releaseTransformCaches(aboveLength = 0): void {
  for (const cache of [plans, scratch, twiddles, inverseScratch, work] as Map<number, unknown>[]) {
    for (const n of [...cache.keys()]) if (n > aboveLength) cache.delete(n)
  }
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
  const s = scratchFor(n)
  let input: Float64Array
  if (x instanceof Float64Array && x.length === n) input = x
  else {
    input = s.input
    const m = Math.min(n, x.length)
    if (x instanceof Float64Array) input.set(m === x.length ? x : x.subarray(0, m))
    else for (let i = 0; i < m; i++) input[i] = x[i]!
    input.fill(0, m)
  }
  plan(n).realTransform(s.out, input)
  return s.out.slice(0, n + 2)
}

/** Inverse of `rfft`: bins 0…n/2 (interleaved) to n real samples, normalised by 1/n, written into `out` (length n). */
export function irfft(spec: Float64Array, n: number, out: Float64Array = new Float64Array(n)): Float64Array {
  if (!isPowerOfTwo(n) || n < 4) throw new RangeError(`FFT length ${n} is not a power of two ≥ 4`)
  const m = n / 2
  let z = inverseScratch.get(n)
  if (z === undefined) {
    z = new Float64Array(2 * m)
    inverseScratch.set(n, z)
  }
  // The output is written straight into the array returned.
  const zt = out
  const tw = twiddlesFor(n)
  const invM = 1 / m
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
    const c = tw.cos[k]!
    const s = tw.sin[k]!
    const or = dr * c - di * s
    const oi = dr * s + di * c
    // The inverse as a forward transform of the bins in reverse order, scaled by 1/m:
    // FFT(Z[(m − k) mod m])[j] = m·IFFT(Z)[j]. It spares fft.js's inverse its separate scaling pass.
    const r = k === 0 ? 0 : m - k
    z[2 * r] = (er - oi) * invM
    z[2 * r + 1] = (ei + or) * invM
  }
  plan(m).transform(zt, z)
  // zt holds m complex values: re/im interleaved are exactly the even/odd output samples.
  return zt
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
