/**
 * What a proposed mask does on production from the same population as its golden units, by
 * simulation (issue: "limits a factory can trust"). The populations are invented for these tests;
 * the properties checked are those of normal tolerance intervals (NIST/SEMATECH e-Handbook 7.2.6.3):
 * limits x̄ ± k·s built for coverage p at confidence γ leave out at most 1 − p of the population in
 * at least γ of repeated samples; and the predictive share (Student t, n − 1 degrees of freedom)
 * is, averaged over samples, the share the limits leave out.
 */
import { beforeAll, describe, expect, it } from 'vitest'
import { gaussian, mulberry32 } from '../../../fixtures/generator.ts'
import { standardGrid } from '../../../server/analysis/index.ts'
import { compareSpreads, proposeMask, type GoldenResult } from '../../../server/limits/propose.ts'
import { estimateFalseRejects } from '../../../server/limits/false-reject.ts'
import { judge, type Judgeable } from '../../../server/verdict/judge.ts'

const P = 0.99
const GAMMA = 0.95

/** The share of `count` draws from N(mean, sd) outside [low, high]. */
function simulatedOutside(randn: () => number, mean: number, sd: number, low: number | null, high: number | null, count: number): number {
  let out = 0
  for (let i = 0; i < count; i++) {
    const x = mean + sd * randn()
    if ((low !== null && x < low) || (high !== null && x > high)) out++
  }
  return out / count
}

const reOnly = (re: number): GoldenResult => ({ parameters: { re20Ohm: re }, curves: { freqHz: [] } })

describe('a single limit from n golden units, no floor', () => {
  // Re of an invented 8 Ω woofer: mean 6.4 Ω, σ 0.064 Ω (1 %). 1000 repetitions per n, 10 000
  // production units each, seed 20261205 + n.
  const MEAN = 6.4
  const SD = 0.064
  const REPS = 1000
  const UNITS = 10_000

  it.each([5, 8, 12, 20, 30])('n = %i: at least γ of the repetitions reject at most 1 − p of production, and the estimate matches', (n) => {
    const randn = gaussian(mulberry32(20261205 + n))
    let held = 0
    const diffs: number[] = []
    for (let r = 0; r < REPS; r++) {
      const golden = Array.from({ length: n }, () => reOnly(MEAN + SD * randn()))
      const { limits, proposal } = proposeMask(golden, { floors: { re20Ohm: 0 }, response: false, coverage: P, confidence: GAMMA })
      expect(proposal.limitCount).toBe(1)
      const lim = limits.scalars.re20Ohm!
      const share = simulatedOutside(randn, MEAN, SD, lim.low, lim.high, UNITS)
      if (share <= 1 - P) held++
      diffs.push(share - estimateFalseRejects(golden, limits).overall)
    }
    // γ less three binomial standard errors of a share estimated from REPS repetitions (0.929).
    expect(held / REPS).toBeGreaterThanOrEqual(GAMMA - 3 * Math.sqrt((GAMMA * (1 - GAMMA)) / REPS))
    // The predictive estimate is unbiased for the share the limits leave out: the mean difference
    // between simulated and estimated shares lies within three standard errors of zero.
    const mean = diffs.reduce((a, b) => a + b, 0) / REPS
    const se = Math.sqrt(diffs.reduce((a, d) => a + (d - mean) ** 2, 0) / (REPS - 1) / REPS)
    expect(Math.abs(mean)).toBeLessThanOrEqual(3 * se)
  })
})

// ---- A whole mask on a whole production line ----

const GRID = standardGrid(20_000).filter((f) => f >= 20 && f <= 16_000)
/** Invented response shape of an 8 Ω woofer at 2.83 V / 1 m: a 2nd-order high-pass at Fs, a gentle rise and a break-up bump. */
const shape = (f: number, fs: number) => {
  const x = f / fs
  return -10 * Math.log10(1 + Math.pow(1 / x, 4)) + 1.5 * Math.exp(-Math.pow(Math.log(f / 2500), 2) / 0.3)
}

interface Population {
  reSd: number
}

/**
 * One unit of the invented population: Re 6.4 Ω (σ reSd), Fs 42 Hz (σ 4 %), Qms 4.5 (σ 6 %), Qes 0.45
 * (σ 5 %), Le 0.9 mH (σ 5 %), sensitivity 88 dB (σ 0.4 dB, the response moves with it), THD max
 * log-normal around 0.6 %, rub and buzz −55 dB (σ 2 dB); the response also tilts a little and
 * carries 0.1 dB of point noise.
 */
function unitOf(randn: () => number, pop: Population): Judgeable & GoldenResult {
  const fs = 42 * (1 + 0.04 * randn())
  const qms = 4.5 * (1 + 0.06 * randn())
  const qes = 0.45 * (1 + 0.05 * randn())
  const level = 0.4 * randn()
  const tilt = 0.2 * randn()
  const re = 6.4 * (1 + pop.reSd * randn())
  return {
    kind: 'sweep',
    parameters: {
      reOhm: re,
      re20Ohm: re,
      fsHz: fs,
      qms,
      qes,
      qts: (qms * qes) / (qms + qes),
      leMh: 0.9 * (1 + 0.05 * randn()),
      sensitivityDb: 88 + level,
      thdMaxPct: 0.6 * Math.exp(0.2 * randn()),
      rubBuzzDb: -55 + 2 * randn(),
      zminOhm: 7.2,
      effectiveImpedanceOhm: 9,
    },
    flags: { polarity: 'normal', openCoil: false, shortedCoil: false },
    curves: { freqHz: GRID, splDb: GRID.map((f) => 88 + level + shape(f, fs) + tilt * Math.log10(f / 1000) + 0.1 * randn()), impedanceOhm: null },
  }
}

/** The share of `count` production units the mask proposed from `n` golden units fails. */
function lineFalseRejects(seed: number, n: number, count: number, golden: Population, production: Population) {
  const randn = gaussian(mulberry32(seed))
  const goldenUnits = Array.from({ length: n }, () => unitOf(randn, golden))
  const { limits, proposal } = proposeMask(goldenUnits, { sweepBandHz: [20, 20_000] })
  let fails = 0
  const failing = new Map<string, number>()
  for (let i = 0; i < count; i++) {
    const j = judge(unitOf(randn, production), limits, 8)
    if (j.verdict === 'fail') fails++
    for (const c of j.checks) if (!c.pass) failing.set(c.name, (failing.get(c.name) ?? 0) + 1)
  }
  return { share: fails / count, limits, proposal, goldenUnits, failing }
}

describe('a mask from 12 golden units, released unedited, on production from the same population', () => {
  // 20 golden samples (seeds 1…20), 1000 production units each: 20 000 judged units.
  const SAMPLES = 20
  const UNITS = 1000
  const SAME: Population = { reSd: 0.01 }
  let runs: ReturnType<typeof lineFalseRejects>[] = []
  beforeAll(() => {
    runs = Array.from({ length: SAMPLES }, (_, s) => lineFalseRejects(s + 1, 12, UNITS, SAME, SAME))
  })
  const meanOf = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length

  it('fails at most 1 % of good units on average, and at most 1 % in at least 90 % of the golden samples', () => {
    const shares = runs.map((r) => r.share)
    expect(meanOf(shares)).toBeLessThanOrEqual(0.01)
    expect(shares.filter((x) => x <= 0.01).length / SAMPLES).toBeGreaterThanOrEqual(0.9)
  })

  it('states for each limit its rule, n and k, and shares the coverage over its limits', () => {
    const { proposal, limits } = runs[0]!
    // Nine figures plus the response curve: each limit is built for 1 − 0.01 / 10 = 0.999.
    expect(proposal.limitCount).toBe(10)
    expect(proposal.coveragePerLimit).toBeCloseTo(0.999, 12)
    expect(Object.keys(limits.scalars).sort()).toEqual(['fsHz', 'leMh', 'qes', 'qms', 'qts', 're20Ohm', 'rubBuzzDb', 'sensitivityDb', 'thdMaxPct'])
    for (const b of Object.values(proposal.scalars)) {
      expect(b!.n).toBe(12)
      expect(['interval', 'floor']).toContain(b!.rule)
    }
    // Fs (σ 4 %) is set by its interval, k2(12, 0.999, 0.95) = 5.31; THD (mean 0.6 %) by its 1-point floor.
    expect(proposal.scalars.fsHz!.rule).toBe('interval')
    expect(proposal.scalars.fsHz!.k).toBeCloseTo(5.311, 2)
    expect(proposal.scalars.thdMaxPct!.rule).toBe('floor')
    expect(proposal.scalars.thdMaxPct!.oneSided).toBe(true)
    expect(proposal.curves.splDb!.n).toBe(12)
  })

  it('estimates the false-reject share from the golden units within a factor 3 of what production shows', () => {
    // Per limit a predictive t share; overall they combine as independent checks. The curve's share
    // is a lower bound and Qts moves with Qms and Qes, hence the factor, stated here.
    const est = meanOf(runs.map((r) => estimateFalseRejects(r.goldenUnits, r.limits).overall))
    const sim = meanOf(runs.map((r) => r.share))
    expect(est).toBeGreaterThan(sim / 3)
    expect(est).toBeLessThan(sim * 3 + 0.001)
  })

  it('still holds when the golden units are far more alike than production (Re σ 0.25 % against 1 %), and says so', () => {
    const tight: Population = { reSd: 0.0025 }
    const tightRuns = Array.from({ length: SAMPLES }, (_, s) => lineFalseRejects(s + 1, 12, 500, tight, SAME))
    expect(meanOf(tightRuns.map((r) => r.share))).toBeLessThanOrEqual(0.01)
    // The floor (Re ± 5 %) carries it: no unit fails on Re.
    expect(tightRuns.every((r) => !r.failing.has('re20Ohm'))).toBe(true)
    const randn = gaussian(mulberry32(7))
    const golden = Array.from({ length: 12 }, () => unitOf(randn, tight))
    const history = Array.from({ length: 400 }, () => unitOf(randn, SAME))
    const { spread, warnings } = compareSpreads(golden, history)
    expect(spread.re20Ohm!.ratio).toBeLessThan(0.5)
    expect(spread.re20Ohm!.historyN).toBe(400)
    expect(warnings.map((w) => w.figure)).toContain('re20Ohm')
    expect(warnings.find((w) => w.figure === 're20Ohm')!.text).toMatch(/more alike than your production/)
    expect(warnings.map((w) => w.figure)).not.toContain('fsHz')
  })

  it('a fixed k = 3 without floors, as proposals used to be, fails far more than 1 % (the reason for the rules)', () => {
    const randn = gaussian(mulberry32(5))
    let fails = 0
    let count = 0
    for (let s = 0; s < 10; s++) {
      const golden = Array.from({ length: 12 }, () => unitOf(randn, SAME))
      const zero = { re20Ohm: 0, fsHz: 0, qts: 0, qms: 0, qes: 0, leMh: 0, sensitivityDb: 0, thdMaxPct: 0, rubBuzzDb: 0, splDb: 0 }
      const { limits } = proposeMask(golden, { k: 3, floors: zero, sweepBandHz: [20, 20_000] })
      for (let i = 0; i < 500; i++, count++) if (judge(unitOf(randn, SAME), limits, 8).verdict === 'fail') fails++
    }
    expect(fails / count).toBeGreaterThan(0.03)
  })
}, 120_000)
