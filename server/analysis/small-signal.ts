/**
 * Small-signal parameters from the electrical impedance.
 *
 * Lumped model (Small, "Direct-Radiator Loudspeaker System Analysis", JAES 1972):
 *   Z(ω) = Re + jωLe + Res / (1 + jQms(ω/ωs − ωs/ω)),  Res = Re·Qms/Qes.
 * The motional part is the parallel RLC of the mechanical system reflected to the electrical side.
 *
 * The fit (fitSmallSignal) is our own Levenberg–Marquardt loop, not a library's, because what it
 * fits is not the shape a generic curve fitter takes (a real y = f(x; p) per point with one global
 * damping): the residuals are complex, the real and imaginary parts of (Z_model − Z)/|Z| stacked as
 * two real residuals per frequency, or ln|Z| ratios when a table has no phase; the parameters are
 * fitted as logarithms (kept positive without clamps, scales balanced) with a floor on Le; and the
 * loop works in a few preallocated buffers on about a hundred points, which keeps the fit stage
 * well under a millisecond of the engine's time budget (npm run bench:analysis). A generic fitter
 * would need the complex points folded into an index trick and would allocate per iteration, for
 * no gain in accuracy; the unused dependency on one was removed.
 */

export interface SmallSignalParams {
  reOhm: number
  leH: number
  fsHz: number
  qms: number
  qes: number
}

/** Copper resistance temperature coefficient at 20 °C, per kelvin (IEC 60028, annealed copper). */
export const COPPER_ALPHA_PER_K = 0.00393
export const REFERENCE_TEMPERATURE_C = 20

/** Complex impedance of the lumped model at fHz, as [re, im]. */
export function modelImpedance(p: SmallSignalParams, fHz: number): [number, number] {
  const res = (p.reOhm * p.qms) / p.qes
  const x = p.qms * (fHz / p.fsHz - p.fsHz / fHz)
  const d = 1 + x * x
  return [p.reOhm + res / d, 2 * Math.PI * fHz * p.leH - (res * x) / d]
}

export function qtsOf(qms: number, qes: number): number {
  return (qms * qes) / (qms + qes)
}

/** Re referred to 20 °C from a reading at ambientC: R20 = R_T / (1 + α(T − 20)) (IEC 60028). */
export function reAt20C(reOhm: number, ambientC: number): number {
  return reOhm / (1 + COPPER_ALPHA_PER_K * (ambientC - REFERENCE_TEMPERATURE_C))
}

/** Copper resistance at tempC given its 20 °C value (IEC 60028). */
export function copperResistanceAt(r20Ohm: number, tempC: number): number {
  return r20Ohm * (1 + COPPER_ALPHA_PER_K * (tempC - REFERENCE_TEMPERATURE_C))
}

/** Minimum fraction of the rated impedance the modulus may fall to (IEC 60268-5, rated impedance). */
export const RATED_IMPEDANCE_MIN_FRACTION = 0.8

export interface RatedImpedanceCheck {
  ratedOhm: number
  limitOhm: number
  zminOhm: number
  fZminHz: number
  ok: boolean
}

/** Checks the minimum of |Z| above the resonance against 80 % of the rated impedance. */
export function checkRatedImpedance(
  freqHz: readonly number[],
  magOhm: readonly (number | null)[],
  ratedOhm: number,
  aboveHz = 0,
): RatedImpedanceCheck {
  let zmin = Number.POSITIVE_INFINITY
  let fmin = Number.NaN
  for (let i = 0; i < freqHz.length; i++) {
    const m = magOhm[i]
    if (m === null || m === undefined || freqHz[i]! < aboveHz) continue
    if (m < zmin) {
      zmin = m
      fmin = freqHz[i]!
    }
  }
  const limitOhm = RATED_IMPEDANCE_MIN_FRACTION * ratedOhm
  return { ratedOhm, limitOhm, zminOhm: zmin, fZminHz: fmin, ok: zmin >= limitOhm }
}

export interface ClassicalResult {
  reOhm: number
  zmaxOhm: number
  fZmaxHz: number
  fsHz: number
  f1Hz: number
  f2Hz: number
  qms: number
  qes: number
  qts: number
}

/**
 * Classical three-point method (Small 1972 model, Le neglected): r0 = Zmax/Re; f1, f2 where
 * |Z| = √(Re·Zmax); Fs = √(f1·f2); Qms = Fs·√r0/(f2 − f1); Qes = Qms/(r0 − 1).
 * Zmax is refined by a parabola in log f through the three highest samples; f1 and f2 by linear
 * interpolation in log f. Returns null when no interior peak is found.
 */
export function classicalThreePoint(
  freqHz: readonly number[],
  magOhm: readonly number[],
  reOhm: number,
  range: [number, number] = [0, Number.POSITIVE_INFINITY],
): ClassicalResult | null {
  const c = peakAndCrossings(freqHz, magOhm, reOhm, range)
  if (c === null || c.f1 === null || c.f2 === null) return null
  return classicalFrom(reOhm, c.zmax, c.fZmax, c.f1, c.f2)
}

function classicalFrom(reOhm: number, zmax: number, fZmax: number, f1: number, f2: number): ClassicalResult {
  const r0 = zmax / reOhm
  const fs = Math.sqrt(f1 * f2)
  const qms = (fs * Math.sqrt(r0)) / (f2 - f1)
  const qes = qms / (r0 - 1)
  return { reOhm, zmaxOhm: zmax, fZmaxHz: fZmax, fsHz: fs, f1Hz: f1, f2Hz: f2, qms, qes, qts: qtsOf(qms, qes) }
}

interface PeakCrossings {
  zmax: number
  fZmax: number
  /** Where |Z| falls to √(Re·Zmax) below and above the peak; null when the data end first. */
  f1: number | null
  f2: number | null
}

/** The refined peak of |Z| within `range` and its two √(Re·Zmax) crossings. */
function peakAndCrossings(
  freqHz: readonly number[],
  magOhm: readonly number[],
  reOhm: number,
  range: [number, number],
): PeakCrossings | null {
  let iMax = -1
  for (let i = 0; i < freqHz.length; i++) {
    if (freqHz[i]! < range[0] || freqHz[i]! > range[1]) continue
    if (iMax < 0 || magOhm[i]! > magOhm[iMax]!) iMax = i
  }
  if (iMax <= 0 || iMax >= freqHz.length - 1) return null
  // Parabolic refinement of the peak in log f.
  const x0 = Math.log(freqHz[iMax - 1]!)
  const x1 = Math.log(freqHz[iMax]!)
  const x2 = Math.log(freqHz[iMax + 1]!)
  const y0 = magOhm[iMax - 1]!
  const y1 = magOhm[iMax]!
  const y2 = magOhm[iMax + 1]!
  const denom = (x0 - x1) * (x0 - x2) * (x1 - x2)
  const A = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / denom
  const B = (x2 * x2 * (y0 - y1) + x1 * x1 * (y2 - y0) + x0 * x0 * (y1 - y2)) / denom
  const C = (x1 * x2 * (x1 - x2) * y0 + x2 * x0 * (x2 - x0) * y1 + x0 * x1 * (x0 - x1) * y2) / denom
  let zmax = y1
  let fZmax = freqHz[iMax]!
  if (A < 0) {
    const xv = -B / (2 * A)
    if (xv > x0 && xv < x2) {
      zmax = C - (B * B) / (4 * A)
      fZmax = Math.exp(xv)
    }
  }
  if (!(zmax > reOhm)) return null
  const level = Math.sqrt(reOhm * zmax)
  const crossing = (dir: -1 | 1): number | null => {
    for (let i = iMax; i + dir >= 0 && i + dir < freqHz.length; i += dir) {
      const a = magOhm[i]!
      const b = magOhm[i + dir]!
      if (a >= level && b < level) {
        const t = (a - level) / (a - b)
        return Math.exp(Math.log(freqHz[i]!) + t * (Math.log(freqHz[i + dir]!) - Math.log(freqHz[i]!)))
      }
    }
    return null
  }
  return { zmax, fZmax, f1: crossing(-1), f2: crossing(1) }
}

export interface FitResult extends SmallSignalParams {
  qts: number
  zmaxOhm: number
  /** RMS relative misfit of the model over the fitted points, %. */
  rmsErrorPct: number
  iterations: number
  points: number
}

interface FitData {
  freqHz: Float64Array
  re: Float64Array
  /** Null for magnitude-only data. */
  im: Float64Array | null
  mag: Float64Array
}

const MIN_LE_H = 1e-9

function unpack(theta: Float64Array): SmallSignalParams {
  const reOhm = Math.exp(theta[0]!)
  const leH = Math.exp(theta[1]!)
  const res = Math.exp(theta[2]!)
  const fsHz = Math.exp(theta[3]!)
  const qms = Math.exp(theta[4]!)
  return { reOhm, leH, fsHz, qms, qes: (qms * reOhm) / res }
}

function residuals(theta: Float64Array, d: FitData, out: Float64Array): void {
  const p = unpack(theta)
  const n = d.freqHz.length
  for (let i = 0; i < n; i++) {
    const [mr, mi] = modelImpedance(p, d.freqHz[i]!)
    if (d.im) {
      out[2 * i] = (mr - d.re[i]!) / d.mag[i]!
      out[2 * i + 1] = (mi - d.im[i]!) / d.mag[i]!
    } else {
      out[i] = Math.log(Math.hypot(mr, mi) / d.mag[i]!)
    }
  }
}

function sumSq(r: Float64Array): number {
  let s = 0
  for (let i = 0; i < r.length; i++) s += r[i]! * r[i]!
  return s
}

/** Solves the small dense system A·x = b in place (Gaussian elimination, partial pivoting). */
function solve(A: Float64Array, b: Float64Array, n: number): Float64Array | null {
  const a = Float64Array.from(A)
  const x = Float64Array.from(b)
  for (let c = 0; c < n; c++) {
    let piv = c
    for (let r = c + 1; r < n; r++) if (Math.abs(a[r * n + c]!) > Math.abs(a[piv * n + c]!)) piv = r
    if (Math.abs(a[piv * n + c]!) < 1e-300) return null
    if (piv !== c) {
      for (let k = 0; k < n; k++) {
        const t = a[c * n + k]!
        a[c * n + k] = a[piv * n + k]!
        a[piv * n + k] = t
      }
      const t = x[c]!
      x[c] = x[piv]!
      x[piv] = t
    }
    for (let r = c + 1; r < n; r++) {
      const f = a[r * n + c]! / a[c * n + c]!
      if (f === 0) continue
      for (let k = c; k < n; k++) a[r * n + k] = a[r * n + k]! - f * a[c * n + k]!
      x[r] = x[r]! - f * x[c]!
    }
  }
  for (let c = n - 1; c >= 0; c--) {
    let s = x[c]!
    for (let k = c + 1; k < n; k++) s -= a[c * n + k]! * x[k]!
    x[c] = s / a[c * n + c]!
  }
  return x
}

/**
 * Levenberg–Marquardt least-squares fit of the lumped model to measured impedance points.
 * Parameters are fitted as logarithms (keeps them positive and balances their scales);
 * residuals are relative ((Z_model − Z)/|Z| for complex data, ln(|Z_model|/|Z|) for magnitudes),
 * so every point weighs the same whatever the impedance level. Jacobian by central differences.
 */
export function fitSmallSignal(
  points: { freqHz: readonly number[]; re?: readonly number[]; im?: readonly number[]; mag?: readonly number[] },
  seed: SmallSignalParams,
  maxIterations = 200,
): FitResult {
  const n = points.freqHz.length
  const freqHz = Float64Array.from(points.freqHz)
  let re: Float64Array
  let im: Float64Array | null
  let mag: Float64Array
  if (points.re && points.im) {
    re = Float64Array.from(points.re)
    im = Float64Array.from(points.im)
    mag = new Float64Array(n)
    for (let i = 0; i < n; i++) mag[i] = Math.hypot(re[i]!, im[i]!)
  } else if (points.mag) {
    mag = Float64Array.from(points.mag)
    re = mag
    im = null
  } else {
    throw new TypeError('fitSmallSignal needs re+im or mag')
  }
  const d: FitData = { freqHz, re, im, mag }
  const P = 5
  const m = im ? 2 * n : n
  let theta = Float64Array.from([
    Math.log(seed.reOhm),
    Math.log(Math.max(seed.leH, MIN_LE_H * 10)),
    Math.log((seed.reOhm * seed.qms) / seed.qes),
    Math.log(seed.fsHz),
    Math.log(seed.qms),
  ])
  const r = new Float64Array(m)
  const rp = new Float64Array(m)
  const rm = new Float64Array(m)
  const J = new Float64Array(m * P)
  residuals(theta, d, r)
  let cost = sumSq(r)
  let lambda = 1e-3
  let it = 0
  const h = 1e-6
  for (; it < maxIterations; it++) {
    for (let j = 0; j < P; j++) {
      const t0 = theta[j]!
      theta[j] = t0 + h
      residuals(theta, d, rp)
      theta[j] = t0 - h
      residuals(theta, d, rm)
      theta[j] = t0
      for (let i = 0; i < m; i++) J[i * P + j] = (rp[i]! - rm[i]!) / (2 * h)
    }
    const JtJ = new Float64Array(P * P)
    const Jtr = new Float64Array(P)
    for (let i = 0; i < m; i++) {
      for (let a = 0; a < P; a++) {
        const ja = J[i * P + a]!
        Jtr[a] = Jtr[a]! + ja * r[i]!
        for (let b = a; b < P; b++) JtJ[a * P + b] = JtJ[a * P + b]! + ja * J[i * P + b]!
      }
    }
    for (let a = 0; a < P; a++) for (let b = 0; b < a; b++) JtJ[a * P + b] = JtJ[b * P + a]!
    let improved = false
    for (let attempt = 0; attempt < 20; attempt++) {
      const A = Float64Array.from(JtJ)
      for (let a = 0; a < P; a++) A[a * P + a] = JtJ[a * P + a]! * (1 + lambda) + 1e-12
      const neg = Jtr.map((v) => -v)
      const delta = solve(A, neg, P)
      if (delta === null) {
        lambda *= 10
        continue
      }
      const trial = theta.map((v, i) => v + delta[i]!)
      trial[1] = Math.max(trial[1]!, Math.log(MIN_LE_H))
      residuals(trial, d, rp)
      const c = sumSq(rp)
      if (Number.isFinite(c) && c < cost) {
        const rel = (cost - c) / cost
        theta = trial
        r.set(rp)
        cost = c
        lambda = Math.max(lambda / 10, 1e-12)
        improved = rel > 1e-12
        break
      }
      lambda *= 10
    }
    if (!improved) break
  }
  const p = unpack(theta)
  const zm = modelImpedance({ ...p, leH: 0 }, p.fsHz)
  return {
    ...p,
    qts: qtsOf(p.qms, p.qes),
    zmaxOhm: zm[0],
    rmsErrorPct: 100 * Math.sqrt(cost / m),
    iterations: it,
    points: n,
  }
}

const RESONANCE_SEARCH_RATIO = 2
const PEAK_WINDOW_RATIO = Math.pow(2, 1 / 3)

/**
 * Index of the mechanical resonance. With phase, the peak of the resistive part (the inductance
 * adds none in this model). With magnitude only, the lowest-frequency peak that is the maximum
 * within ±1/3 octave and stands well above the minimum (a large Le can make |Z| at the top of the
 * band exceed Zmax, so the global maximum is not enough). Near the bottom of the data the window
 * is cut short, but the peak still needs a lower neighbour no higher than itself.
 */
export function findResonance(freqHz: readonly number[], re: readonly number[] | null, mag: readonly number[]): number {
  const n = freqHz.length
  const src = re ?? mag
  if (re) {
    let iMax = 0
    for (let i = 1; i < n; i++) if (src[i]! > src[iMax]!) iMax = i
    return iMax
  }
  let min = Number.POSITIVE_INFINITY
  for (let i = 0; i < n; i++) min = Math.min(min, mag[i]!)
  let j0 = 0
  let j1 = 0
  for (let i = 1; i < n - 1; i++) {
    const f = freqHz[i]!
    if (mag[i]! < 1.5 * min) continue
    while (freqHz[j0]! < f / PEAK_WINDOW_RATIO) j0++
    if (j1 < i) j1 = i
    while (j1 + 1 < n && freqHz[j1 + 1]! <= f * PEAK_WINDOW_RATIO) j1++
    if (j1 === n - 1) break
    let isMax = true
    for (let j = j0; j <= j1 && isMax; j++) if (mag[j]! > mag[i]!) isMax = false
    if (isMax) return i
  }
  let iMax = 0
  for (let i = 1; i < n; i++) if (mag[i]! > mag[iMax]!) iMax = i
  return iMax
}

/**
 * Seeds the fit: Re from the minimum real part (or modulus) above resonance, Fs/Qms/Qes from the
 * classical method, Le from the reactance left at the top of the band.
 */
export function seedSmallSignal(
  freqHz: readonly number[],
  re: readonly number[] | null,
  im: readonly number[] | null,
  mag: readonly number[],
): { seed: SmallSignalParams; classical: ClassicalResult | null } | null {
  const n = freqHz.length
  const iPeak = findResonance(freqHz, re, mag)
  const fPeak = freqHz[iPeak]!
  // Re: smallest resistive part between 3·Fs and 30·Fs, where the motional part has died
  // away and the inductance has not yet taken over.
  let reOhm = Number.POSITIVE_INFINITY
  const src = re ?? mag
  for (let i = 0; i < n; i++) {
    if (freqHz[i]! >= 3 * fPeak && freqHz[i]! <= 30 * fPeak) reOhm = Math.min(reOhm, src[i]!)
  }
  if (!Number.isFinite(reOhm)) {
    for (let i = iPeak; i < n; i++) reOhm = Math.min(reOhm, src[i]!)
  }
  if (!(reOhm > 0) || !Number.isFinite(reOhm)) return null
  const pc = peakAndCrossings(freqHz, mag, reOhm, [fPeak / RESONANCE_SEARCH_RATIO, fPeak * RESONANCE_SEARCH_RATIO])
  if (pc === null || (pc.f1 === null && pc.f2 === null)) return null
  // The motional impedance is symmetric in log f about Fs (Small 1972 model), so when the data
  // end before one crossing (a resonance near the bottom of the band), that crossing is mirrored
  // about the peak: a seed only, and no classical figures are reported from it.
  const classical = pc.f1 !== null && pc.f2 !== null ? classicalFrom(reOhm, pc.zmax, pc.fZmax, pc.f1, pc.f2) : null
  const f1 = pc.f1 ?? (pc.fZmax * pc.fZmax) / pc.f2!
  const f2 = pc.f2 ?? (pc.fZmax * pc.fZmax) / pc.f1!
  const start = classical ?? classicalFrom(reOhm, pc.zmax, pc.fZmax, f1, f2)
  // Le from the top decade of the data: the reactance left after the motional part.
  const base: SmallSignalParams = { reOhm, leH: 0, fsHz: start.fsHz, qms: start.qms, qes: start.qes }
  const estimates: number[] = []
  const fTop = freqHz[n - 1]!
  for (let i = 0; i < n; i++) {
    const f = freqHz[i]!
    if (f < fTop / 10 || f < 10 * fPeak) continue
    const [, mi] = modelImpedance(base, f)
    const x = im ? im[i]! - mi : Math.sqrt(Math.max(0, mag[i]! * mag[i]! - reOhm * reOhm)) - mi
    estimates.push(x / (2 * Math.PI * f))
  }
  estimates.sort((a, b) => a - b)
  const leH = estimates.length ? Math.max(estimates[estimates.length >> 1]!, 1e-7) : 1e-4
  return { seed: { ...base, leH }, classical }
}

/**
 * How far below Fs the measurement must start for a trustworthy Fs and Qms: about half an octave
 * (common practice: the sweep starts at least half an octave below the resonance).
 */
export const MIN_START_OCTAVES_BELOW_FS = 0.5
/** Least stretch of fitted data below the resonance, octaves (ours: about eight points at 48 per octave). */
export const MIN_FLANK_OCTAVES = 1 / 6

/** Lowest Fs reported when the measurement starts at startHz and its fitted data at lowestHz. */
export function lowestMeasurableFsHz(startHz: number, lowestHz: number): number {
  return Math.max(startHz * Math.pow(2, MIN_START_OCTAVES_BELOW_FS), lowestHz * Math.pow(2, MIN_FLANK_OCTAVES))
}

/**
 * True when the resistive part (or the modulus without phase) is highest within the lowest sixth of
 * an octave of the data and stands above its minimum by a tenth or more (ours: far above measurement
 * noise, yet met by the upper flank of a sharp resonance well below the data): the resonance lies at
 * or below the data.
 */
const BOTTOM_PEAK_RATIO = 1.1

export function resonanceAtBottom(freqHz: readonly number[], re: readonly number[] | null, mag: readonly number[]): boolean {
  const src = re ?? mag
  const n = freqHz.length
  if (n < 3) return false
  let iMax = 0
  let min = Number.POSITIVE_INFINITY
  for (let i = 0; i < n; i++) {
    if (src[i]! > src[iMax]!) iMax = i
    min = Math.min(min, src[i]!)
  }
  return freqHz[iMax]! <= freqHz[0]! * Math.pow(2, MIN_FLANK_OCTAVES) && src[iMax]! >= BOTTOM_PEAK_RATIO * min
}
