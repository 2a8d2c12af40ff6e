import { describe, expect, it } from 'vitest'
import { mean as ssMean } from 'simple-statistics'
import {
  D2_N2,
  D4_N2,
  StatsError,
  describeSignal,
  findBaseline,
  imrChart,
  imrLimits,
  movingRangeSignals,
  movingRanges,
  westernElectric,
  type RunRule,
} from '../../../server/stats/index.ts'

describe('I-MR limits', () => {
  it('computes limits of a small series by hand', () => {
    // 10, 12, 11, 13, 12: x̄ = 58/5 = 11.6; moving ranges 2, 1, 2, 1 → MR̄ = 6/4 = 1.5;
    // σ = MR̄/d2 = 1.5/1.128 = 1.329787; limits 11.6 ± 3·1.329787 = 15.589362 and 7.610638;
    // MR chart UCL = D4·MR̄ = 3.267·1.5 = 4.9005 (d2 = 1.128, D4 = 3.267 for n = 2: Montgomery's
    // table of control-chart constants and NIST/SEMATECH e-Handbook 6.3.2.2, from memory).
    const xs = [10, 12, 11, 13, 12]
    expect(movingRanges(xs)).toEqual([2, 1, 2, 1])
    const l = imrLimits(xs)
    expect(l.centre).toBeCloseTo(11.6, 12)
    expect(l.centre).toBeCloseTo(ssMean(xs), 12) // simple-statistics, as a second opinion
    expect(l.mrBar).toBe(1.5)
    expect(l.sigma).toBeCloseTo(1.329787, 6)
    expect(l.ucl).toBeCloseTo(15.589362, 6)
    expect(l.lcl).toBeCloseTo(7.610638, 6)
    expect(l.mrUcl).toBeCloseTo(4.9005, 10)
    expect(l.mrLcl).toBe(0)
  })

  it('reproduces the individuals-chart example of the NIST/SEMATECH e-Handbook 6.3.2.2', () => {
    // The handbook's flow-rate example (data and results from memory): ten batches
    // 49.6, 47.6, 49.9, 51.3, 47.8, 51.2, 52.6, 52.4, 53.6, 52.1 with x̄ = 50.81, MR̄ = 1.8778,
    // UCL = 55.80, LCL = 45.82 and MR chart UCL = 6.13. Hand check: Σx = 508.1 → x̄ = 50.81;
    // moving ranges 2.0, 2.3, 1.4, 3.5, 3.4, 1.4, 0.2, 1.2, 1.5 sum to 16.9 → MR̄ = 16.9/9 = 1.87778;
    // 3·MR̄/1.128 = 4.99409 → UCL 55.80409, LCL 45.81591; 3.267·1.87778 = 6.13470.
    const l = imrLimits([49.6, 47.6, 49.9, 51.3, 47.8, 51.2, 52.6, 52.4, 53.6, 52.1])
    expect(l.centre).toBeCloseTo(50.81, 10)
    expect(l.mrBar).toBeCloseTo(16.9 / 9, 10)
    expect(l.ucl).toBeCloseTo(55.8, 2)
    expect(l.lcl).toBeCloseTo(45.82, 2)
    expect(l.mrUcl).toBeCloseTo(6.13, 2)
    expect(l.ucl).toBeCloseTo(50.81 + (3 * (16.9 / 9)) / D2_N2, 10)
    expect(l.mrUcl).toBeCloseTo(D4_N2 * (16.9 / 9), 10)
  })

  it('refuses fewer than two values and non-finite values', () => {
    expect(() => imrLimits([1])).toThrow(StatsError)
    expect(() => imrLimits([1, Number.NaN, 2])).toThrow(/finite/)
  })
})

// Rules on a chart with centre 0 and σ = 1, so the zones are plain numbers.
const UNIT = { centre: 0, sigma: 1 }
const fired = (xs: number[], rule: RunRule) => westernElectric(xs, UNIT, { rules: [rule] })

// Western Electric Statistical Quality Control Handbook (1956) zone tests, as listed in the
// NIST/SEMATECH e-Handbook 6.3.2 (from memory). Each rule: a series that fires it and one just short.
describe('Western Electric rules', () => {
  it.each<[string, RunRule, number[], { index: number; side: 'above' | 'below'; points: number[] } | null]>([
    ['1: one point beyond 3σ', 'beyond-3-sigma', [0, 0.5, 3.2, 0], { index: 2, side: 'above', points: [2] }],
    ['1: below too', 'beyond-3-sigma', [0, -3.01], { index: 1, side: 'below', points: [1] }],
    ['1 short: 2.9σ', 'beyond-3-sigma', [0, 0.5, 2.9, 0], null],
    ['1 short: exactly on the limit is not beyond', 'beyond-3-sigma', [0, 3, -3], null],
    ['2: two of three beyond 2σ, same side', 'two-of-three-beyond-2-sigma', [0, 2.5, 0.3, 2.2], { index: 3, side: 'above', points: [1, 3] }],
    ['2 short: two beyond 2σ but four points apart', 'two-of-three-beyond-2-sigma', [2.5, 0.3, 0.1, 2.5], null],
    ['2 short: two of three beyond 2σ on opposite sides', 'two-of-three-beyond-2-sigma', [2.5, 0.3, -2.5], null],
    ['3: four of five beyond 1σ, same side', 'four-of-five-beyond-1-sigma', [-1.5, -1.2, 0.2, -1.1, -1.9], { index: 4, side: 'below', points: [0, 1, 3, 4] }],
    ['3 short: three of five', 'four-of-five-beyond-1-sigma', [-1.5, -1.2, 0.2, -0.9, -1.9], null],
    ['3 short: four beyond 1σ spread over six points', 'four-of-five-beyond-1-sigma', [1.5, 1.5, 0, 0, 1.5, 1.5], null],
    ['4: eight in a row above the centre line', 'eight-on-one-side', [-0.2, 0.1, 0.4, 0.2, 0.9, 0.3, 0.1, 0.6, 0.2], { index: 8, side: 'above', points: [1, 2, 3, 4, 5, 6, 7, 8] }],
    ['4 short: seven in a row, then one below', 'eight-on-one-side', [0.1, 0.4, 0.2, 0.9, 0.3, 0.1, 0.6, -0.2], null],
    ['4 short: a point on the centre line breaks the run', 'eight-on-one-side', [0.1, 0.4, 0.2, 0.9, 0, 0.3, 0.1, 0.6, 0.2], null],
  ])('rule %s', (_name, rule, xs, expected) => {
    const signals = fired(xs, rule)
    if (expected === null) expect(signals).toEqual([])
    else expect(signals).toEqual([{ rule, ...expected }])
  })

  it('signals again at each point that extends a run, reporting the run so far', () => {
    const s = fired(Array.from({ length: 10 }, () => -0.5), 'eight-on-one-side')
    expect(s.map((x) => x.index)).toEqual([7, 8, 9])
    expect(s.map((x) => x.points.length)).toEqual([8, 9, 10])
  })

  it('tests all four rules by default, and a quiet series fires none', () => {
    const all = westernElectric([0, 3.5, 0, 2.5, 2.5], UNIT)
    // 3.5 is beyond 3σ (and counts as beyond 2σ for rule 2 at index 3: 3.5, 0, 2.5); only 3 of the
    // 5 points are beyond 1σ, so rule 3 stays quiet, and no run of 8 exists.
    expect(all.map((s) => `${s.index}:${s.rule}`)).toEqual(['1:beyond-3-sigma', '3:two-of-three-beyond-2-sigma', '4:two-of-three-beyond-2-sigma'])
    expect(westernElectric([0.5, -0.5, 0.9, -0.9, 1.5, -1.5, 0.2, -0.2, 0.1, -0.1], UNIT)).toEqual([])
  })

  it('flags a moving range above D4·MR̄', () => {
    expect(movingRangeSignals([1, 1.5, 6, 6.2], { mrUcl: 4 })).toEqual([{ rule: 'moving-range-beyond-limit', index: 2, side: 'above', points: [1, 2] }])
    expect(movingRangeSignals([1, 1.5, 5.5, 6.2], { mrUcl: 4 })).toEqual([]) // a jump of exactly 4 is on the limit
  })
})

describe('I-MR chart over production order', () => {
  // A wild first unit, then ten in control, then a shift of +0.28 (between 1σ and 2σ of the stretch).
  const STABLE = [5.0, 5.2, 4.9, 5.1, 5.0, 4.8, 5.1, 4.9, 5.2, 5.0]
  const SERIES = [20, ...STABLE, ...Array.from({ length: 8 }, () => 5.3)]

  it('takes its limits from the first in-control stretch', () => {
    // The stretch from 0 holds the jump 20 → 5 (above its own D4·MR̄); the stretch from 1 is quiet:
    // x̄ = 50.2/10 = 5.02, MR̄ = 2.0/9 = 0.2222, σ = 0.2222/1.128 = 0.19701.
    const b = findBaseline(SERIES, 10)!
    expect(b).toMatchObject({ start: 1, end: 11 })
    expect(b.limits.centre).toBeCloseTo(5.02, 12)
    expect(b.limits.sigma).toBeCloseTo(2.0 / 9 / 1.128, 12)
    expect(findBaseline(SERIES.slice(0, 5), 10)).toBeNull()
  })

  it('flags the wild unit, the jump after it and the shift', () => {
    const chart = imrChart(SERIES, { baselineLength: 10 })!
    expect(chart.baseline).toEqual({ source: 'stretch', start: 1, end: 11 })
    expect(chart.points[0]).toEqual({ index: 0, value: 20, movingRange: null })
    expect(chart.points[1]!.movingRange).toBe(15)
    const firsts = new Map<string, number>()
    for (const s of chart.signals) if (!firsts.has(s.rule)) firsts.set(s.rule, s.index)
    // 20 is far above UCL = 5.02 + 3·0.19701 = 5.611; the 20 → 5.0 jump (15) is above D4·MR̄ = 0.726.
    expect(firsts.get('beyond-3-sigma')).toBe(0)
    expect(firsts.get('moving-range-beyond-limit')).toBe(1)
    // 5.3 − 5.02 = 0.28: beyond 1σ (0.197), not 2σ (0.394). Four of five first at index 14
    // (window 10–14: 5.0, 5.3, 5.3, 5.3, 5.3); eight in a row above first at 18 (run 11–18, since 5.0 at 10 is below).
    expect(firsts.get('four-of-five-beyond-1-sigma')).toBe(14)
    expect(firsts.get('eight-on-one-side')).toBe(18)
    expect(firsts.has('two-of-three-beyond-2-sigma')).toBe(false)
  })

  it('uses a given baseline such as the golden units', () => {
    const chart = imrChart([5.0, 5.1, 6.0], { baseline: STABLE })!
    expect(chart.baseline).toEqual({ source: 'given' })
    expect(chart.limits.centre).toBeCloseTo(5.02, 12)
    expect(chart.signals.map((s) => [s.index, s.rule])).toEqual([
      [2, 'beyond-3-sigma'],
      [2, 'moving-range-beyond-limit'],
    ])
    expect(imrChart([5.0, 5.1, 6.0], { baseline: STABLE, movingRange: false })!.signals).toHaveLength(1)
  })

  it('has no chart when no stretch is in control', () => {
    expect(imrChart([1, 2, 3], { baselineLength: 5 })).toBeNull()
  })
})

describe('plain-language warnings', () => {
  const FS = { label: 'Fs', unit: 'Hz' }

  it('says how long a run has lasted', () => {
    const [s] = fired([0.1, 0.4, 0.2, 0.9, 0.3, 0.1, 0.6, 0.2], 'eight-on-one-side')
    expect(describeSignal(s!, FS)).toBe('Fs has run above its centre line for 8 units in a row: the process has shifted.')
  })

  it('names the unit of a point beyond the limits, by serial when given', () => {
    const [s] = fired([0, -3.5], 'beyond-3-sigma')
    expect(describeSignal(s!, FS, ['SN-001', 'SN-002'])).toMatch(/^Fs of unit SN-002 is below the lower control limit/)
    expect(describeSignal(s!, FS)).toMatch(/unit #2 in production order/)
  })

  it('has a warning for each rule', () => {
    const two = fired([2.5, 2.5], 'two-of-three-beyond-2-sigma')[0]!
    const four = fired([-1.5, -1.5, -1.5, -1.5], 'four-of-five-beyond-1-sigma')[0]!
    const jump = movingRangeSignals([1, 9], { mrUcl: 2 })[0]!
    expect(describeSignal(two, FS)).toBe('Fs: 2 of the last 3 units are beyond 2σ above the centre line: the process is likely moving upward.')
    expect(describeSignal(four, { label: 'Re (20 °C)' })).toBe('Re (20 °C): 4 of the last 5 units are beyond 1σ below the centre line: the process has likely shifted downward.')
    expect(describeSignal(jump, FS)).toMatch(/^Fs jumped between unit #1 in production order and unit #2/)
  })
})
