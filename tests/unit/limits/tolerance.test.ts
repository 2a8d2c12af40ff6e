/**
 * Tolerance factors and predicted false-reject shares, against sources outside the project:
 * - NIST/SEMATECH e-Handbook of Statistical Methods, section 7.2.6.3 (tolerance intervals for a
 *   normal distribution), its worked example: n = 43, p = 0.90, γ = 0.99 gives k2 = 2.2173 and
 *   k1 = 1.8752;
 * - P. M. Berthouex & L. C. Brown, "Statistics for Environmental Engineers" (2nd ed.), table 21.1,
 *   two-sided tolerance factors at 95 % confidence (exact values, to two decimals);
 * - jStat (npm `jstat`), a general-purpose statistics library: its chi-square and normal quantiles
 *   recompute Howe's factor independently of the stdlib packages the code uses, its noncentral t
 *   gives the exact one-sided factor, and its Student t the predictive share.
 */
import { describe, expect, it } from 'vitest'
import jstat from 'jstat'
import { combinedShare, oneSidedToleranceFactor, predictedOutsideShare, robustSd, twoSidedToleranceFactor } from '../../../server/stats/tolerance.ts'

const { jStat } = jstat

describe('tolerance factors', () => {
  it('reproduce the e-Handbook 7.2.6.3 worked example (n = 43, p = 0.90, γ = 0.99)', () => {
    expect(twoSidedToleranceFactor(43, 0.9, 0.99)).toBeCloseTo(2.2173, 4)
    expect(oneSidedToleranceFactor(43, 0.9, 0.99)).toBeCloseTo(1.8752, 4)
  })

  // Berthouex & Brown, table 21.1: [n, k at p = 0.90, 0.95, 0.99], confidence 95 %.
  const TABLE_21_1: [number, number, number, number][] = [
    [5, 4.29, 5.08, 6.6],
    [8, 3.16, 3.75, 4.89],
    [10, 2.86, 3.39, 4.44],
    [12, 2.67, 3.17, 4.16],
    [20, 2.32, 2.76, 3.62],
    [30, 2.15, 2.55, 3.35],
  ]
  // Howe's method is an approximation: within 1.5 percent of the exact factor at n = 5, within 1 percent from n = 8 on.
  it.each(TABLE_21_1)('two-sided k for n = %i agrees with the published exact factors', (n, k90, k95, k99) => {
    for (const [p, k] of [[0.9, k90], [0.95, k95], [0.99, k99]] as const) {
      expect(Math.abs(twoSidedToleranceFactor(n, p, 0.95) - k) / k, `n ${n}, p ${p}`).toBeLessThan(n < 8 ? 0.015 : 0.01)
    }
  })

  it.each([5, 8, 12, 20, 30, 100])('two-sided k for n = %i agrees with Howe recomputed from jStat quantiles', (n) => {
    for (const [p, g] of [[0.99, 0.95], [0.999, 0.95], [0.9, 0.99]] as const) {
      const z = jStat.normal.inv((1 + p) / 2, 0, 1)
      const howe = Math.sqrt(((n - 1) * (1 + 1 / n) * z * z) / jStat.chisquare.inv(1 - g, n - 1))
      expect(twoSidedToleranceFactor(n, p, g)).toBeCloseTo(howe, 5)
    }
  })

  /** The exact one-sided factor: k√n is the γ quantile of the noncentral t with n − 1 degrees of freedom and noncentrality z_p·√n (e-Handbook 7.2.6.3). */
  function exactOneSided(n: number, p: number, g: number): number {
    const ncp = jStat.normal.inv(p, 0, 1) * Math.sqrt(n)
    let [lo, hi] = [0, 50]
    for (let i = 0; i < 80; i++) {
      const mid = (lo + hi) / 2
      if (jStat.noncentralt.cdf(mid * Math.sqrt(n), n - 1, ncp) < g) lo = mid
      else hi = mid
    }
    return (lo + hi) / 2
  }

  // The e-Handbook's one-sided approximation runs up to about 1.5 percent under the exact factor for these n.
  it.each([5, 8, 12, 20, 30])('one-sided k for n = %i agrees with the exact noncentral-t factor (jStat) within 2 percent', (n) => {
    for (const p of [0.99, 0.999]) {
      const exact = exactOneSided(n, p, 0.95)
      expect(Math.abs(oneSidedToleranceFactor(n, p, 0.95) - exact) / exact, `n ${n}, p ${p}`).toBeLessThan(0.02)
    }
  })

  it('refuses a sample of one and shares outside (0, 1) with a typed error', () => {
    expect(() => twoSidedToleranceFactor(1, 0.99, 0.95)).toThrow(expect.objectContaining({ code: 'invalid_option' }))
    expect(() => twoSidedToleranceFactor(10, 1, 0.95)).toThrow(expect.objectContaining({ code: 'invalid_option' }))
    expect(() => oneSidedToleranceFactor(10, 0.99, 0)).toThrow(expect.objectContaining({ code: 'invalid_option' }))
  })
})

describe('predicted share outside a pair of limits', () => {
  it('is the Student-t tail of the prediction of one more value (jStat studentt)', () => {
    // x̄ = 10, s = 0.5, n = 12: the scale of a new value is s·√(1 + 1/12).
    const scale = 0.5 * Math.sqrt(1 + 1 / 12)
    const expected = jStat.studentt.cdf((9 - 10) / scale, 11) + 1 - jStat.studentt.cdf((11.5 - 10) / scale, 11)
    expect(predictedOutsideShare(10, 0.5, 12, 9, 11.5)).toBeCloseTo(expected, 10)
    expect(predictedOutsideShare(10, 0.5, 12, null, 11.5)).toBeCloseTo(1 - jStat.studentt.cdf(1.5 / scale, 11), 10)
  })

  it('says 0 or 1 when the sample has no spread', () => {
    expect(predictedOutsideShare(5, 0, 12, 4, 6)).toBe(0)
    expect(predictedOutsideShare(7, 0, 12, 4, 6)).toBe(1)
  })

  it('combines independent checks as 1 − Π(1 − share)', () => {
    expect(combinedShare([0.01, 0.02])).toBeCloseTo(1 - 0.99 * 0.98, 12)
    expect(combinedShare([])).toBe(0)
  })

  it('robust σ: 1.4826 × MAD, unmoved by a few defective units', () => {
    // 1..9: median 5, absolute deviations 4 3 2 1 0 1 2 3 4 → MAD 2 → 2 / Φ⁻¹(0.75) = 2 × 1.482602 (jStat's normal quantile).
    const xs = [1, 2, 3, 4, 5, 6, 7, 8, 9]
    expect(robustSd(xs)).toBeCloseTo(2 / jStat.normal.inv(0.75, 0, 1), 9)
    expect(robustSd([...xs, 1000])).toBeCloseTo(robustSd([...xs, 10])!, 9)
    expect(robustSd([3])).toBeNull()
  })
})
