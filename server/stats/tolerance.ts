/**
 * Tolerance factors for a normal population and the share of a population a pair of limits leaves
 * out, from a sample of n units: what a mask proposal builds its limits on and estimates its false
 * rejects with.
 *
 * Sources:
 * - NIST/SEMATECH e-Handbook of Statistical Methods, section 7.2.6.3, "Tolerance intervals for a
 *   normal distribution": the two-sided factor k2 by Howe's method and the one-sided factor k1 by
 *   the approximation given there (Natrella).
 * - The prediction of one more value from a normal sample: (X − x̄) / (s·√(1 + 1/n)) follows
 *   Student's t with n − 1 degrees of freedom (e-Handbook 7.1.3 on the t statistic, and any
 *   textbook on prediction intervals, e.g. Hahn & Meeker, "Statistical Intervals", ch. 4).
 *
 * Quantiles and distribution functions come from the stdlib packages (registry), not from code of
 * our own.
 */
import chisquareQuantile from '@stdlib/stats-base-dists-chisquare-quantile'
import normalQuantile from '@stdlib/stats-base-dists-normal-quantile'
import tCdf from '@stdlib/stats-base-dists-t-cdf'
import { StatsError } from './errors.ts'

function checkArgs(n: number, p: number, gamma: number) {
  if (!(Number.isInteger(n) && n >= 2)) throw new StatsError('invalid_option', `A tolerance factor needs at least 2 values (got ${n})`)
  for (const [name, v] of [['coverage', p], ['confidence', gamma]] as const) {
    if (!(v > 0 && v < 1)) throw new StatsError('invalid_option', `The ${name} must lie between 0 and 1 (got ${v})`)
  }
}

/**
 * Two-sided tolerance factor k2(n, p, γ): x̄ ± k2·s holds at least the share p of the population
 * with confidence γ. Howe's method (e-Handbook 7.2.6.3):
 * k2 = √( ν·(1 + 1/n)·z²((1 + p)/2) / χ²(1 − γ; ν) ), ν = n − 1, χ²(1 − γ; ν) the lower quantile.
 */
export function twoSidedToleranceFactor(n: number, p: number, gamma: number): number {
  checkArgs(n, p, gamma)
  const nu = n - 1
  const z = normalQuantile((1 + p) / 2, 0, 1)
  return Math.sqrt((nu * (1 + 1 / n) * z * z) / chisquareQuantile(1 - gamma, nu))
}

/**
 * One-sided tolerance factor k1(n, p, γ): x̄ + k1·s lies above at least the share p of the
 * population with confidence γ. The approximation of e-Handbook 7.2.6.3:
 * a = 1 − z²γ / (2(n − 1)), b = z²p − z²γ / n, k1 = (zp + √(z²p − a·b)) / a.
 * Below about n = 8 it runs a few per cent under the exact (noncentral t) factor; the floors and
 * the minimum number of golden units keep proposals away from that corner.
 */
export function oneSidedToleranceFactor(n: number, p: number, gamma: number): number {
  checkArgs(n, p, gamma)
  const zp = normalQuantile(p, 0, 1)
  const zg = normalQuantile(gamma, 0, 1)
  const a = 1 - (zg * zg) / (2 * (n - 1))
  const b = zp * zp - (zg * zg) / n
  if (a <= 0) throw new StatsError('invalid_option', `Too few values (${n}) for a one-sided factor at confidence ${gamma}`)
  return (zp + Math.sqrt(zp * zp - a * b)) / a
}

/**
 * The expected share of the population outside [low, high] (either may be null: open), predicted
 * from a sample of n values with mean `mean` and standard deviation `sd`: the predictive Student-t
 * of the module comment. With sd = 0 the sample says nothing about the spread: 0 inside, 1 outside.
 */
export function predictedOutsideShare(mean: number, sd: number, n: number, low: number | null, high: number | null): number {
  if (n < 2 || !(sd > 0)) return (low !== null && mean < low) || (high !== null && mean > high) ? 1 : 0
  const scale = sd * Math.sqrt(1 + 1 / n)
  const nu = n - 1
  const below = low === null ? 0 : tCdf((low - mean) / scale, nu)
  const above = high === null ? 0 : 1 - tCdf((high - mean) / scale, nu)
  return Math.min(1, below + above)
}

/** The share failing at least one of independent checks, each failing its own share: 1 − Π(1 − shareᵢ). */
export function combinedShare(shares: readonly number[]): number {
  return 1 - shares.reduce((pass, s) => pass * (1 - s), 1)
}

/**
 * A robust standard deviation: 1.4826 × the median absolute deviation from the median, which
 * estimates σ of a normal population and is not pulled by a few defective units (e-Handbook 1.3.5.6,
 * "Measures of scale", MAD; the factor is 1/Φ⁻¹(3/4)).
 */
export function robustSd(values: readonly number[]): number | null {
  const xs = values.filter(Number.isFinite)
  if (xs.length < 2) return null
  const median = (v: number[]) => {
    const s = [...v].sort((a, b) => a - b)
    const m = s.length >> 1
    return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2
  }
  const med = median(xs)
  return median(xs.map((x) => Math.abs(x - med))) / normalQuantile(0.75, 0, 1)
}
