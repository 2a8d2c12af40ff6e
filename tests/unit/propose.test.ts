import { describe, expect, it } from 'vitest'
import { standardGrid } from '../../server/analysis/index.ts'
import { DEFAULT_FLOORS } from '../../shared/utils/mask.ts'
import {
  MIN_GOLDEN_UNITS,
  ProposeError,
  defaultCurveRange,
  proposeLimits,
  type GoldenResult,
} from '../../server/limits/propose.ts'
import { summarize } from '../../server/stats/summary.ts'
import { judge, type Judgeable } from '../../server/verdict/judge.ts'

describe('golden statistics (mean, sample standard deviation)', () => {
  it('matches the certified values of NIST StRD NumAcc1 (mean 10000002, sd 1)', () => {
    // NIST Statistical Reference Datasets, Univariate Summary Statistics, NumAcc1
    // (itl.nist.gov/div898/strd/univ): three observations, certified sample mean 10000002 and
    // certified sample standard deviation 1. A one-pass Σx² formula loses every digit here.
    const s = summarize([10000001, 10000003, 10000002])!
    expect(s.n).toBe(3)
    expect(s.mean).toBe(10000002)
    expect(s.sd).toBeCloseTo(1, 12)
  })

  it('matches the certified values of NIST StRD NumAcc3 (mean 1000000.2, sd 0.1)', () => {
    // NumAcc3, same source: 1001 observations, certified mean 1000000.2 and sd 0.1. The data are
    // 1000000.2 followed by 500 pairs 1000000.1, 1000000.3 (layout from memory; it reproduces both
    // certified values: Σd² = 1000·0.01 = 10, 10 / (1001 − 1) = 0.01, √0.01 = 0.1).
    const xs = [1000000.2]
    for (let i = 0; i < 500; i++) xs.push(1000000.1, 1000000.3)
    const s = summarize(xs)!
    expect(s.n).toBe(1001)
    expect(s.mean).toBeCloseTo(1000000.2, 8)
    // NIST grades such results by log relative error; 8 correct digits is a good score for NumAcc3.
    expect(Math.abs(s.sd - 0.1) / 0.1).toBeLessThan(1e-8)
  })

  it('computes a textbook example by hand', () => {
    // 2, 4, 4, 4, 5, 5, 7, 9: Σ = 40, mean = 5; deviations −3, −1, −1, −1, 0, 0, 2, 4;
    // Σd² = 9 + 1 + 1 + 1 + 0 + 0 + 4 + 16 = 32; sample variance 32 / (8 − 1) = 4.571429;
    // s = √4.571429 = 2.138090 (the population value would be √(32/8) = 2).
    const s = summarize([2, 4, 4, 4, 5, 5, 7, 9])!
    expect(s.mean).toBe(5)
    expect(s.sd).toBeCloseTo(Math.sqrt(32 / 7), 12)
    expect(s.sd).toBeCloseTo(2.13809, 5)
  })

  it('skips nulls and non-finite values, and gives sd 0 for one value', () => {
    expect(summarize([null, 3, undefined, Number.NaN, 5])).toEqual({ n: 2, mean: 4, sd: Math.SQRT2 })
    expect(summarize([7])).toEqual({ n: 1, mean: 7, sd: 0 })
    expect(summarize([null])).toBeNull()
  })
})

const GRID = standardGrid(20_000)

/** A golden unit with flat curves at `splDb` and `zOhm`, and the given scalars. */
function unit(p: GoldenResult['parameters'], splDb: number | ((f: number) => number | null), zOhm = 8): GoldenResult {
  const spl = typeof splDb === 'number' ? () => splDb : splDb
  return {
    parameters: p,
    curves: { freqHz: GRID, splDb: GRID.map(spl), impedanceOhm: GRID.map(() => zOhm) },
    flags: { polarity: 'normal' },
  }
}

// Five golden units, worked by hand below.
const FS = [40, 42, 44, 46, 48]
const THD = [0.3, 0.4, 0.5, 0.4, 0.4]
const RB = [-60, -62, -61, -59, -63]
const SPL_OFFSET = [-1, -0.5, 0, 0.5, 1]
const golden: GoldenResult[] = FS.map((fs, i) =>
  unit({ re20Ohm: 5.9, fsHz: fs, qts: null, sensitivityDb: 88 + SPL_OFFSET[i]!, thdMaxPct: THD[i]!, rubBuzzDb: RB[i]! }, 90 + SPL_OFFSET[i]!, 8 + SPL_OFFSET[i]! / 10),
)

// A fixed k = 3 keeps the hand-worked figures simple; the tolerance factors have their own tests (tolerance.test.ts).
const K3 = { k: 3 }

describe('proposeLimits with a fixed k: scalars', () => {
  const limits = proposeLimits(golden, K3)

  it('Fs: mean ± 3σ when 3σ exceeds the floor', () => {
    // Mean 44; deviations −4, −2, 0, 2, 4; Σd² = 40; s² = 40 / 4 = 10; s = 3.162278;
    // 3s = 9.486833 > the 10 % floor (4.4 Hz) → [34.513167, 53.486833].
    expect(limits.scalars.fsHz!.low).toBeCloseTo(34.5132, 3)
    expect(limits.scalars.fsHz!.high).toBeCloseTo(53.4868, 3)
  })

  it('Re: the floor when the golden units agree exactly', () => {
    // All 5.9 Ω: s = 0, so the 5 % floor (0.295 Ω) sets the band → [5.605, 6.195].
    expect(limits.scalars.re20Ohm!.low).toBeCloseTo(5.605, 9)
    expect(limits.scalars.re20Ohm!.high).toBeCloseTo(6.195, 9)
  })

  it('THD max and rub and buzz: upper limits only', () => {
    // THD: mean 0.4; Σd² = 0.01 + 0 + 0.01 + 0 + 0 = 0.02; s = √0.005 = 0.070711; 3s = 0.2121 < 1 point floor → high 1.4.
    expect(limits.scalars.thdMaxPct!.low).toBeNull()
    expect(limits.scalars.thdMaxPct!.high).toBeCloseTo(1.4, 9)
    // Rub and buzz: mean −61; Σd² = 1 + 1 + 0 + 4 + 4 = 10; s = √2.5 = 1.581139; 3s = 4.743416 > 3 → high −56.256584.
    expect(limits.scalars.rubBuzzDb!.low).toBeNull()
    expect(limits.scalars.rubBuzzDb!.high).toBeCloseTo(-56.2566, 3)
  })

  it('leaves out a figure the golden units did not measure, and keeps the fixed checks on', () => {
    expect(limits.scalars.qts).toBeUndefined()
    expect(limits.polarityNormal).toBe(true)
    expect(limits.ratedImpedanceRule).toBe(true)
  })

  it('applies k and floor overrides, and leaves out a figure asked to', () => {
    const l = proposeLimits(golden, { k: 1, floors: { fsHz: 12 }, omit: ['sensitivityDb'] })
    // k = 1: s = 3.162 < 12 % of 44 = 5.28 Hz → [38.72, 49.28].
    expect(l.scalars.fsHz!.low).toBeCloseTo(38.72, 9)
    expect(l.scalars.fsHz!.high).toBeCloseTo(49.28, 9)
    expect(l.scalars.sensitivityDb).toBeUndefined()
  })

  it(`refuses fewer than ${MIN_GOLDEN_UNITS} golden units with a typed error`, () => {
    expect(() => proposeLimits(golden.slice(0, 4))).toThrow(ProposeError)
    try {
      proposeLimits(golden.slice(0, 4))
    } catch (err) {
      expect((err as ProposeError).code).toBe('too_few_golden_units')
    }
  })

  it('refuses a negative k or an empty range', () => {
    expect(() => proposeLimits(golden, { k: -1 })).toThrow(expect.objectContaining({ code: 'invalid_proposal_options' }))
    expect(() => proposeLimits(golden, { fromHz: 500, toHz: 400 })).toThrow(expect.objectContaining({ code: 'invalid_proposal_options' }))
  })
})

describe('proposeLimits with a fixed k: response band', () => {
  it('defaults to the sweep band less its last one-third octave', () => {
    // 20 kHz / 10^(1/10) = 15 886.6 Hz (base-10 one-third-octave ratio, IEC 61260-1).
    const [from, to] = defaultCurveRange([20, 20_000])
    expect(from).toBe(20)
    expect(to).toBeCloseTo(15886.6, 1)
    const band = proposeLimits(golden, K3).curves.splDb!
    expect(band.freqHz[0]).toBeGreaterThanOrEqual(20)
    expect(band.freqHz.at(-1)).toBeLessThanOrEqual(to)
    // Nothing of the grid inside the range is missing at either end.
    const inside = GRID.filter((f) => f >= 20 && f <= to)
    expect(band.freqHz.length).toBe(inside.length)
  })

  it('is mean ± 3σ where the spread is wide, and the floor where it is narrow', () => {
    // Offsets −1, −0.5, 0, 0.5, 1 dB around 90: Σd² = 2.5; s = √0.625 = 0.790569; 3s = 2.371708 > 1.5.
    const wide = proposeLimits(golden, K3).curves.splDb!
    expect(wide.high.every((v) => v !== null && Math.abs(v - 92.3717) < 1e-3)).toBe(true)
    expect(wide.low.every((v) => v !== null && Math.abs(v - 87.6283) < 1e-3)).toBe(true)
    // Offsets a tenth as large: 3s = 0.237 < the 1.5 dB floor → 88.5 … 91.5.
    const tight = golden.map((g, i) => unit(g.parameters, 90 + SPL_OFFSET[i]! / 10))
    const narrow = proposeLimits(tight, K3).curves.splDb!
    expect(narrow.high.every((v) => v === 90 + DEFAULT_FLOORS.splDb.value)).toBe(true)
    expect(narrow.low.every((v) => v === 90 - DEFAULT_FLOORS.splDb.value)).toBe(true)
  })

  it('builds the upper and lower sides separately, with extra margin in a marked region', () => {
    const band = proposeLimits(golden, {
      ...K3,
      fromHz: 100,
      toHz: 10_000,
      response: { upper: { k: 2, floor: 1 }, lower: { floor: 3 }, regions: [{ fromHz: 3000, toHz: 6000, upper: 2 }] },
    }).curves.splDb!
    expect(band.freqHz[0]).toBeGreaterThanOrEqual(100)
    expect(band.freqHz.at(-1)).toBeLessThanOrEqual(10_000)
    band.freqHz.forEach((f, i) => {
      // Upper: max(2 · 0.790569, 1) = 1.581139, plus 2 dB inside 3–6 kHz; lower: max(3 · 0.790569, 3) = 3.
      const up = 90 + 1.581139 + (f >= 3000 && f <= 6000 ? 2 : 0)
      expect(band.high[i]).toBeCloseTo(up, 3)
      expect(band.low[i]).toBeCloseTo(87, 9)
    })
  })

  it('leaves a point open where fewer than five golden curves have a value', () => {
    // One golden curve missing below 50 Hz: 4 values there, so those points carry no limit.
    const holes = golden.map((g, i) => (i === 0 ? unit(g.parameters, (f) => (f < 50 ? null : 89)) : g))
    const band = proposeLimits(holes, K3).curves.splDb!
    band.freqHz.forEach((f, i) => {
      if (f < 50) expect([band.low[i], band.high[i]]).toEqual([null, null])
      else expect(band.low[i]).not.toBeNull()
    })
  })

  it('proposes an impedance band only when asked, with a floor relative to the mean', () => {
    expect(proposeLimits(golden).curves.impedanceOhm).toBeUndefined()
    const z = proposeLimits(golden, { ...K3, impedance: true }).curves.impedanceOhm!
    // |Z| 7.9 … 8.1 Ω: mean 8; s = 0.0790569; 3s = 0.237 < 5 % of 8 = 0.4 → 7.6 … 8.4 Ω.
    expect(z.low.every((v) => v !== null && Math.abs(v - 7.6) < 1e-9)).toBe(true)
    expect(z.high.every((v) => v !== null && Math.abs(v - 8.4) < 1e-9)).toBe(true)
  })
})

describe('proposed limits judged by judge()', () => {
  const limits = proposeLimits(golden, K3)
  const asJudgeable = (g: GoldenResult, splShift = 0, fsHz = 44): Judgeable => ({
    kind: 'sweep',
    parameters: {
      reOhm: 5.9, re20Ohm: 5.9, fsHz, qts: null, sensitivityDb: 88, thdMaxPct: 0.4, rubBuzzDb: -61,
      zminOhm: 7.5, effectiveImpedanceOhm: 8,
    },
    flags: { polarity: 'normal', openCoil: false, shortedCoil: false },
    curves: { freqHz: GRID, splDb: g.curves.splDb!.map((v) => (v === null ? null : v + splShift)), impedanceOhm: g.curves.impedanceOhm! },
  })

  it('passes a golden unit', () => {
    expect(judge(asJudgeable(golden[2]!), limits, 8).verdict).toBe('pass')
  })

  it('fails a response 3 dB low, naming the response check', () => {
    const j = judge(asJudgeable(golden[2]!, -3), limits, 8)
    expect(j.verdict).toBe('fail')
    expect(j.checks.filter((c) => !c.pass).map((c) => c.name)).toEqual(['splDb'])
  })

  it('fails an Fs above the proposed band', () => {
    const j = judge(asJudgeable(golden[2]!, 0, 55), limits, 8)
    expect(j.checks.find((c) => c.name === 'fsHz')!.pass).toBe(false)
  })
})
