/**
 * Distributions against the mask limits, for the lot report: histogram, mean, sample standard
 * deviation, and the process capability indices Cp, Cpk, Cpu and Cpl.
 *
 * Capability formulas as in the NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6
 * "What is Process Capability?":
 *   Cp  = (USL − LSL) / (6σ)
 *   Cpu = (USL − μ) / (3σ)
 *   Cpl = (μ − LSL) / (3σ)
 *   Cpk = min(Cpu, Cpl)
 * with μ and σ estimated by the sample mean and the sample standard deviation. For a one-sided
 * specification the handbook uses Cpu or Cpl alone; here Cpk then equals that one index, so a
 * threshold such as "Cpk ≥ 1.33" reads the same for one- and two-sided figures (our choice).
 *
 * Pure: explicit imports, no Nuxt, h3 or database.
 */
import { summarize } from './summary.ts'
import { StatsError } from './errors.ts'

/** Specification limits of one figure (the mask's low and high); null where the mask sets none. */
export interface SpecLimits {
  lsl: number | null
  usl: number | null
}

export interface Capability {
  /** Finite values used. */
  n: number
  mean: number | null
  /** Sample standard deviation (n − 1), or the σ the caller gave. */
  sd: number | null
  sigmaSource: 'sample' | 'given'
  /** Null without both limits, or when σ cannot be estimated (fewer than 2 values, or σ = 0). */
  cp: number | null
  /** Null without an upper limit (or without σ). */
  cpu: number | null
  /** Null without a lower limit (or without σ). */
  cpl: number | null
  /** min(Cpu, Cpl) over the indices that exist; null when neither does. */
  cpk: number | null
  /** Observed values below LSL and above USL (counts, not a normal-model estimate). */
  belowLsl: number
  aboveUsl: number
}

function checkLimits(limits: SpecLimits): void {
  for (const [name, v] of [['lsl', limits.lsl], ['usl', limits.usl]] as const) {
    if (v !== null && !Number.isFinite(v)) throw new StatsError('invalid_limits', `${name} must be a finite number or null`)
  }
  if (limits.lsl !== null && limits.usl !== null && limits.lsl >= limits.usl) {
    throw new StatsError('invalid_limits', `LSL (${limits.lsl}) must be below USL (${limits.usl})`)
  }
}

/**
 * Cp, Cpu, Cpl and Cpk from a mean and a standard deviation (NIST/SEMATECH e-Handbook 6.1.6).
 * Indices are null where a limit is missing or σ is not positive.
 * @throws StatsError `invalid_limits` when a limit is not finite or LSL ≥ USL.
 */
export function capabilityIndices(
  mean: number,
  sigma: number,
  limits: SpecLimits,
): Pick<Capability, 'cp' | 'cpu' | 'cpl' | 'cpk'> {
  checkLimits(limits)
  if (!(Number.isFinite(mean) && Number.isFinite(sigma) && sigma > 0)) return { cp: null, cpu: null, cpl: null, cpk: null }
  const { lsl, usl } = limits
  const cp = lsl !== null && usl !== null ? (usl - lsl) / (6 * sigma) : null
  const cpu = usl !== null ? (usl - mean) / (3 * sigma) : null
  const cpl = lsl !== null ? (mean - lsl) / (3 * sigma) : null
  const sides = [cpu, cpl].filter((v): v is number => v !== null)
  const cpk = sides.length > 0 ? Math.min(...sides) : null
  return { cp, cpu, cpl, cpk }
}

/**
 * Capability of a set of measured values against their limits. Non-finite values (a figure the
 * recording did not yield) are skipped. σ is the sample standard deviation unless `sigma` is given
 * (e.g. the within-process σ = MR̄/d2 of an individuals chart, see control.ts).
 * @throws StatsError `invalid_limits` when a limit is not finite or LSL ≥ USL.
 */
export function capability(values: readonly (number | null | undefined)[], limits: SpecLimits, opts: { sigma?: number } = {}): Capability {
  checkLimits(limits)
  const s = summarize(values)
  const xs = values.filter((v): v is number => typeof v === 'number' && Number.isFinite(v))
  const belowLsl = limits.lsl === null ? 0 : xs.filter((x) => x < limits.lsl!).length
  const aboveUsl = limits.usl === null ? 0 : xs.filter((x) => x > limits.usl!).length
  const sigmaSource = opts.sigma === undefined ? 'sample' : 'given'
  if (opts.sigma !== undefined && !(Number.isFinite(opts.sigma) && opts.sigma >= 0)) {
    throw new StatsError('invalid_option', 'sigma must be a finite number ≥ 0')
  }
  if (!s) return { n: 0, mean: null, sd: opts.sigma ?? null, sigmaSource, cp: null, cpu: null, cpl: null, cpk: null, belowLsl, aboveUsl }
  // One value gives no spread: summarize reports sd 0, which capabilityIndices treats as "no σ".
  const sd = opts.sigma ?? (s.n > 1 ? s.sd : null)
  const idx = sd === null ? { cp: null, cpu: null, cpl: null, cpk: null } : capabilityIndices(s.mean, sd, limits)
  return { n: s.n, mean: s.mean, sd, sigmaSource, ...idx, belowLsl, aboveUsl }
}

// ---------------------------------------------------------------------------------------------
// Histogram

/**
 * Bin-width rules:
 * - `freedman-diaconis`: width h = 2·IQR·n^(−1/3) (Freedman & Diaconis 1981), robust to outliers,
 *   which a lot with a few gross failures has; falls back to Sturges when the IQR is 0;
 * - `sturges`: k = ⌈log2 n⌉ + 1 bins (Sturges 1926), fine for small, near-normal samples.
 */
export type BinRule = 'freedman-diaconis' | 'sturges'

/** Upper bound on the bin count, so one wild value cannot make a chart of thousands of empty bins (our choice). */
export const MAX_BINS = 100

export interface HistogramOptions {
  rule?: BinRule
  /** Exact edges, ascending (overrides the rule); values outside them are counted in below/above. */
  edges?: readonly number[]
  /** Values the edges must reach as well as the data (e.g. the mask limits, to draw them on the chart). */
  include?: readonly (number | null | undefined)[]
}

export interface Histogram {
  /** Bin edges, ascending, one more than the bins. Bin i is [edges[i], edges[i+1]); the last bin is closed on both ends. */
  edges: number[]
  counts: number[]
  /** The rule that set the width ('edges' when the caller gave them; 'sturges' after a Freedman–Diaconis fallback). */
  rule: BinRule | 'edges'
  n: number
  /** Values outside explicit edges (always 0 for edges chosen by a rule). */
  below: number
  above: number
}

/**
 * The q-quantile of sorted values by linear interpolation between order statistics (Hyndman & Fan
 * 1996, definition 7, the default of R and NumPy).
 */
export function quantileSorted(sorted: readonly number[], q: number): number {
  if (sorted.length === 0) throw new StatsError('too_few_points', 'a quantile needs at least one value')
  const h = (sorted.length - 1) * q
  const lo = Math.floor(h)
  const hi = Math.min(lo + 1, sorted.length - 1)
  return sorted[lo]! + (h - lo) * (sorted[hi]! - sorted[lo]!)
}

function sturgesBins(n: number): number {
  return Math.ceil(Math.log2(n)) + 1
}

/**
 * Histogram of the finite values. Edges start at the smallest value (or included point) and step
 * by the rule's width; a sample with a single distinct value (and nothing to include) gets one bin
 * of width 1 centred on it (our choice: a chart needs a bar with a width).
 * @throws StatsError `invalid_option` for edges that are not finite and strictly ascending.
 */
export function histogram(values: readonly (number | null | undefined)[], opts: HistogramOptions = {}): Histogram {
  const xs = values.filter((v): v is number => typeof v === 'number' && Number.isFinite(v)).sort((a, b) => a - b)
  const n = xs.length
  if (opts.edges) return countInto(xs, [...opts.edges], 'edges')
  if (n === 0) return { edges: [], counts: [], rule: opts.rule ?? 'freedman-diaconis', n: 0, below: 0, above: 0 }
  const extra = (opts.include ?? []).filter((v): v is number => typeof v === 'number' && Number.isFinite(v))
  const lo = Math.min(xs[0]!, ...extra)
  const hi = Math.max(xs[n - 1]!, ...extra)
  if (hi === lo) return countInto(xs, [lo - 0.5, lo + 0.5], opts.rule ?? 'freedman-diaconis')
  let rule: BinRule = opts.rule ?? 'freedman-diaconis'
  let bins: number
  if (rule === 'freedman-diaconis') {
    const iqr = quantileSorted(xs, 0.75) - quantileSorted(xs, 0.25)
    if (iqr > 0) {
      // (hi − lo) / h with h = 2·IQR·n^(−1/3).
      bins = Math.ceil(((hi - lo) * Math.cbrt(n)) / (2 * iqr))
    } else {
      rule = 'sturges'
      bins = sturgesBins(n)
    }
  } else {
    bins = sturgesBins(n)
  }
  bins = Math.min(MAX_BINS, Math.max(1, bins))
  const width = (hi - lo) / bins
  // Edges as lo + i·width, with the last one set to hi exactly so the maximum falls in the last bin.
  const edges = Array.from({ length: bins + 1 }, (_, i) => (i === bins ? hi : lo + i * width))
  return countInto(xs, edges, rule)
}

function countInto(sorted: readonly number[], edges: number[], rule: Histogram['rule']): Histogram {
  if (edges.length < 2 || edges.some((e, i) => !Number.isFinite(e) || (i > 0 && e <= edges[i - 1]!))) {
    throw new StatsError('invalid_option', 'histogram edges must be at least two finite numbers, strictly ascending')
  }
  const counts = new Array<number>(edges.length - 1).fill(0)
  let below = 0
  let above = 0
  const last = edges.length - 1
  for (const x of sorted) {
    if (x < edges[0]!) below++
    else if (x > edges[last]!) above++
    else if (x === edges[last]!) counts[last - 1]!++
    else {
      // Binary search for the bin i with edges[i] ≤ x < edges[i+1].
      let a = 0
      let b = last
      while (b - a > 1) {
        const m = (a + b) >> 1
        if (edges[m]! <= x) a = m
        else b = m
      }
      counts[a]!++
    }
  }
  return { edges, counts, rule, n: sorted.length, below, above }
}
