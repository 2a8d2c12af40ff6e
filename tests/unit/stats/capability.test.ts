import { describe, expect, it } from 'vitest'
import { mean as ssMean, sampleStandardDeviation as ssSd } from 'simple-statistics'
import { StatsError, capability, capabilityIndices, histogram, quantileSorted } from '../../../server/stats/index.ts'

describe('capability indices (NIST/SEMATECH e-Handbook 6.1.6 "What is Process Capability?")', () => {
  // The handbook's worked example (numbers from memory): USL = 20, LSL = 8, observed mean 16 and
  // standard deviation 2. It finds Cp = (20 − 8)/(6·2) = 1.0, then the centring factor
  // k = |m − x̄| / ((USL − LSL)/2) with m = (USL + LSL)/2 = 14: k = 2/6 = 0.3333, and
  // Cpk = Cp(1 − k) = 0.6667. Hand check of the min form used here:
  //   Cpu = (20 − 16)/(3·2) = 4/6 = 0.6667, Cpl = (16 − 8)/(3·2) = 8/6 = 1.3333, Cpk = min = 0.6667.
  const NIST = { lsl: 8, usl: 20 }

  it('reproduces the handbook worked example from its mean and standard deviation', () => {
    const c = capabilityIndices(16, 2, NIST)
    expect(c.cp).toBeCloseTo(1.0, 12)
    expect(c.cpu).toBeCloseTo(2 / 3, 12)
    expect(c.cpl).toBeCloseTo(4 / 3, 12)
    expect(c.cpk).toBeCloseTo(0.6667, 4)
    // The handbook's other route to the same Cpk: Cp(1 − k).
    const m = (NIST.usl + NIST.lsl) / 2
    const k = Math.abs(m - 16) / ((NIST.usl - NIST.lsl) / 2)
    expect(k).toBeCloseTo(0.3333, 4)
    expect(c.cpk).toBeCloseTo(c.cp! * (1 - k), 12)
  })

  it('reproduces the same example from data with mean 16 and s = 2', () => {
    // Hand calculation: 14, 16, 18 → mean 16; deviations −2, 0, 2; Σd² = 8; s² = 8/(3 − 1) = 4; s = 2.
    const c = capability([14, 16, 18], NIST)
    expect(c).toMatchObject({ n: 3, mean: 16, sd: 2, sigmaSource: 'sample', belowLsl: 0, aboveUsl: 0 })
    expect(c.cp).toBeCloseTo(1.0, 12)
    expect(c.cpk).toBeCloseTo(2 / 3, 12)
  })

  it('computes a hand-worked off-centre case', () => {
    // 9, 10, 10, 11, 10 with LSL 7, USL 14: mean 10; Σd² = 1 + 0 + 0 + 1 + 0 = 2; s² = 2/4 = 0.5; s = √0.5.
    // Cp = 7/(6√0.5) = 7√2/6 = 1.649916; Cpu = 4/(3√0.5) = 1.885618; Cpl = 3/(3√0.5) = √2 = 1.414214.
    const c = capability([9, 10, 10, 11, 10], { lsl: 7, usl: 14 })
    expect(c.sd).toBeCloseTo(Math.sqrt(0.5), 12)
    expect(c.cp).toBeCloseTo(1.649916, 6)
    expect(c.cpu).toBeCloseTo(1.885618, 6)
    expect(c.cpl).toBeCloseTo(Math.SQRT2, 12)
    expect(c.cpk).toBeCloseTo(Math.SQRT2, 12)
  })

  it('agrees with simple-statistics on the mean and sample standard deviation', () => {
    const xs = [71.2, 69.8, 70.4, 72.9, 68.5, 70.0, 71.7, 69.1, 70.6, 70.3]
    const c = capability(xs, { lsl: 60, usl: 80 })
    expect(c.mean).toBeCloseTo(ssMean(xs), 12)
    expect(c.sd).toBeCloseTo(ssSd(xs), 12)
    expect(c.cp).toBeCloseTo(20 / (6 * ssSd(xs)), 10)
  })

  it('gives the one-sided index alone when only one limit exists, and Cpk equal to it', () => {
    // Upper limit only (e.g. THD max): Cpu = (USL − μ)/(3σ) = (20 − 16)/6 (handbook 6.1.6, one-sided specifications).
    const up = capabilityIndices(16, 2, { lsl: null, usl: 20 })
    expect(up).toEqual({ cp: null, cpu: 4 / 6, cpl: null, cpk: 4 / 6 })
    const low = capabilityIndices(16, 2, { lsl: 8, usl: null })
    expect(low).toEqual({ cp: null, cpu: null, cpl: 8 / 6, cpk: 8 / 6 })
    expect(capabilityIndices(16, 2, { lsl: null, usl: null })).toEqual({ cp: null, cpu: null, cpl: null, cpk: null })
  })

  it('gives a negative Cpk when the mean lies outside a limit, and counts values outside the limits', () => {
    const c = capability([21, 22, 23], { lsl: 8, usl: 20 }) // mean 22, s = 1
    expect(c.cpu).toBeCloseTo(-2 / 3, 12)
    expect(c.cpk).toBeCloseTo(-2 / 3, 12)
    expect(c.aboveUsl).toBe(3)
    expect(capability([7, 8, 20, 21], { lsl: 8, usl: 20 })).toMatchObject({ belowLsl: 1, aboveUsl: 1 }) // on a limit is inside
  })

  it('has no indices without a spread, and uses a given σ when asked', () => {
    expect(capability([5], { lsl: 0, usl: 10 })).toMatchObject({ n: 1, mean: 5, sd: null, cp: null, cpk: null })
    expect(capability([5, 5, 5], { lsl: 0, usl: 10 })).toMatchObject({ sd: 0, cp: null, cpk: null })
    expect(capability([], { lsl: 0, usl: 10 })).toMatchObject({ n: 0, mean: null, cp: null })
    const given = capability([14, 16, 18, null, Number.NaN], NIST, { sigma: 1 })
    expect(given).toMatchObject({ n: 3, sd: 1, sigmaSource: 'given', cp: 2, cpk: 4 / 3 })
  })

  it('refuses crossed or non-finite limits', () => {
    expect(() => capability([1, 2], { lsl: 10, usl: 5 })).toThrow(StatsError)
    expect(() => capabilityIndices(1, 1, { lsl: 5, usl: 5 })).toThrow(/LSL/)
    expect(() => capability([1, 2], { lsl: Number.NaN, usl: 5 })).toThrow(StatsError)
  })
})

describe('histogram', () => {
  it('quantiles interpolate between order statistics (Hyndman & Fan definition 7)', () => {
    // 1..8: position (8 − 1)·0.25 = 1.75 → 2 + 0.75·(3 − 2) = 2.75; (8 − 1)·0.75 = 5.25 → 6.25.
    const xs = [1, 2, 3, 4, 5, 6, 7, 8]
    expect(quantileSorted(xs, 0.25)).toBe(2.75)
    expect(quantileSorted(xs, 0.75)).toBe(6.25)
    expect(quantileSorted(xs, 0.5)).toBe(4.5)
  })

  it('Freedman–Diaconis: width 2·IQR·n^(−1/3)', () => {
    // 1..8: IQR = 6.25 − 2.75 = 3.5; h = 2·3.5/∛8 = 3.5; range 7 → ⌈7/3.5⌉ = 2 bins: [1, 4.5), [4.5, 8].
    const h = histogram([8, 1, 7, 2, 6, 3, 5, 4])
    expect(h.rule).toBe('freedman-diaconis')
    expect(h.edges).toEqual([1, 4.5, 8])
    expect(h.counts).toEqual([4, 4])
  })

  it("Sturges: ⌈log2 n⌉ + 1 bins, the maximum in the closed last bin", () => {
    // n = 8 → 3 + 1 = 4 bins of width 7/4 = 1.75: edges 1, 2.75, 4.5, 6.25, 8.
    const h = histogram([1, 2, 3, 4, 5, 6, 7, 8], { rule: 'sturges' })
    expect(h.edges).toEqual([1, 2.75, 4.5, 6.25, 8])
    expect(h.counts).toEqual([2, 2, 2, 2])
    expect(h).toMatchObject({ n: 8, below: 0, above: 0 })
  })

  it('falls back to Sturges when the IQR is 0', () => {
    // 5, 5, 5, 5, 5, 9: Q1 = Q3 = 5; n = 6 → ⌈2.585⌉ + 1 = 4 bins of width 1.
    const h = histogram([5, 5, 5, 5, 5, 9])
    expect(h.rule).toBe('sturges')
    expect(h.edges).toEqual([5, 6, 7, 8, 9])
    expect(h.counts).toEqual([5, 0, 0, 1])
  })

  it('widens its range to the limits it is asked to include', () => {
    // 10, 11, 12 with limits 8 and 14, Sturges: n = 3 → 3 bins over [8, 14]: [8, 10), [10, 12), [12, 14].
    const h = histogram([10, 11, 12], { rule: 'sturges', include: [8, 14, null] })
    expect(h.edges).toEqual([8, 10, 12, 14])
    expect(h.counts).toEqual([0, 2, 1])
  })

  it('counts into explicit edges, with values outside them apart', () => {
    const h = histogram([0, 1, 1.5, 2, 3, null, Number.NaN], { edges: [1, 2, 2.5] })
    expect(h).toMatchObject({ rule: 'edges', counts: [2, 1], below: 1, above: 1, n: 5 })
    expect(() => histogram([1], { edges: [2, 1] })).toThrow(StatsError)
  })

  it('handles one distinct value and no value', () => {
    expect(histogram([3, 3])).toMatchObject({ edges: [2.5, 3.5], counts: [2] })
    expect(histogram([])).toMatchObject({ edges: [], counts: [], n: 0 })
  })

  it('never loses a value, even with an outlier far out', () => {
    const xs = Array.from({ length: 200 }, (_, i) => 50 + Math.sin(i) * 2)
    xs.push(5000)
    const h = histogram(xs)
    expect(h.counts.reduce((a, b) => a + b, 0)).toBe(xs.length)
    expect(h.counts.length).toBeLessThanOrEqual(100)
    expect(h.edges[h.edges.length - 1]).toBe(5000)
  })
})
