/**
 * Crossed gauge R&R, against sources outside the project:
 * - the worked example of the AIAG Measurement Systems Analysis reference manual, 4th edition
 *   (10 parts × appraisers A, B, C × 3 trials). The data as reproduced in Table 1 of W. McNeese,
 *   "Three Methods to Analyze Gage R&R Studies", SPC for Excel, February 2015
 *   (https://www.spcforexcel.com/knowledge/measurement-systems-analysis/three-methods-analyze-gage-rr-studies),
 *   which names the manual as its source; the rows visible there were compared value for value, and
 *   the whole table against several independent public reproductions of the example, which agree.
 *   Its sums of squares coming out as the manual prints them (below) checks all 90 values at once;
 * - the manual's printed results: average-and-range EV = 0.20188, AV = 0.22963, GRR = 0.30575,
 *   PV = 1.10456, TV = 1.14610, %GRR = 26.68 %, ndc = 5; its ANOVA table and ANOVA results (quoted
 *   from memory of the manual, marked so beside each check);
 * - a second computation written here: the two-way ANOVA from the textbook's computational formulas
 *   (totals of rows, columns and cells; Montgomery, Design and Analysis of Experiments, the
 *   two-factor factorial), another route than the module's deviations about the means, and p-values
 *   from jStat's central F distribution (npm `jstat`) instead of the stdlib package the code uses.
 */
import { describe, expect, it } from 'vitest'
import jstat from 'jstat'
import { StatsError } from '../../../server/stats/errors.ts'
import {
  checkGaugeDesign,
  distinctCategories,
  fUpperTail,
  gaugeStudy,
  grrBand,
  type GaugeMeasurement,
  type GaugeStudy,
} from '../../../server/stats/gauge-rr.ts'

// jstat.d.ts types only the functions other tests use; the central F cdf is read through this shape.
const centralF = (jstat.jStat as unknown as { centralF: { cdf(x: number, d1: number, d2: number): number } }).centralF

/** AIAG MSA 4th ed. example: appraiser → trials 1..3 → parts 1..10. */
const AIAG: Record<string, number[][]> = {
  A: [
    [0.29, -0.56, 1.34, 0.47, -0.8, 0.02, 0.59, -0.31, 2.26, -1.36],
    [0.41, -0.68, 1.17, 0.5, -0.92, -0.11, 0.75, -0.2, 1.99, -1.25],
    [0.64, -0.58, 1.27, 0.64, -0.84, -0.21, 0.66, -0.17, 2.01, -1.31],
  ],
  B: [
    [0.08, -0.47, 1.19, 0.01, -0.56, -0.2, 0.47, -0.63, 1.8, -1.68],
    [0.25, -1.22, 0.94, 1.03, -1.2, 0.22, 0.55, 0.08, 2.12, -1.62],
    [0.07, -0.68, 1.34, 0.2, -1.28, 0.06, 0.83, -0.34, 2.19, -1.5],
  ],
  C: [
    [0.04, -1.38, 0.88, 0.14, -1.46, -0.29, 0.02, -0.46, 1.77, -1.49],
    [-0.11, -1.13, 1.09, 0.2, -1.07, -0.67, 0.01, -0.56, 1.45, -1.77],
    [-0.15, -0.96, 0.67, 0.11, -1.45, -0.49, 0.21, -0.49, 1.87, -2.16],
  ],
}

function aiagReadings(): GaugeMeasurement[] {
  return Object.entries(AIAG).flatMap(([appraiser, trials]) =>
    trials.flatMap((values, t) => values.map((value, i) => ({ part: `P${i + 1}`, appraiser, trial: t + 1, value }))),
  )
}

/** A full crossed study from a cell function: value(part index, appraiser index, trial index). */
function study(parts: number, appraisers: number, trials: number, value: (i: number, j: number, k: number) => number): GaugeMeasurement[] {
  const out: GaugeMeasurement[] = []
  for (let i = 0; i < parts; i++) {
    for (let j = 0; j < appraisers; j++) {
      for (let k = 0; k < trials; k++) out.push({ part: `P${i + 1}`, appraiser: `S${j + 1}`, trial: k + 1, value: value(i, j, k) })
    }
  }
  return out
}

function refusal(fn: () => unknown): StatsError {
  try {
    fn()
  } catch (e) {
    if (e instanceof StatsError) return e
    throw e
  }
  throw new Error('expected a StatsError')
}

describe('AIAG MSA 4th ed. example, average-and-range method', () => {
  const s = gaugeStudy(aiagReadings())
  const r = s.range!

  it('reads the design as 10 parts × 3 appraisers × 3 trials, balanced', () => {
    expect(s.design).toMatchObject({ appraisers: ['A', 'B', 'C'], trials: [1, 2, 3], trialsPerCell: 3, balanced: true })
    expect(s.design.parts).toEqual(['P1', 'P2', 'P3', 'P4', 'P5', 'P6', 'P7', 'P8', 'P9', 'P10'])
    expect(s.rangeRefusal).toBeNull()
  })

  it('finds the intermediate figures the manual prints (from memory of its report form)', () => {
    // X̄a = 0.1903, X̄b = 0.0683, X̄c = −0.2543; R̄a = 0.184, R̄b = 0.513, R̄c = 0.328; R̿ = 0.3417; Rp = 3.511.
    expect(r.appraiserAverages.A).toBeCloseTo(0.1903, 4)
    expect(r.appraiserAverages.B).toBeCloseTo(0.0683, 4)
    expect(r.appraiserAverages.C).toBeCloseTo(-0.2543, 4)
    expect(r.appraiserAverageRanges).toEqual({ A: expect.closeTo(0.184, 10), B: expect.closeTo(0.513, 10), C: expect.closeTo(0.328, 10) })
    expect(r.rBarBar).toBeCloseTo(0.3417, 4)
    expect(r.rp).toBeCloseTo(3.511, 3)
    expect([r.k1, r.k2, r.k3]).toEqual([0.5908, 0.5231, 0.3146])
  })

  it('reproduces the printed EV, AV, GRR, PV and TV', () => {
    // AIAG MSA 4th ed. (printed): EV 0.20188, AV 0.22963, GRR 0.30575, PV 1.10456, TV 1.14610. The
    // manual carries R̿, X̄diff = 0.4446 and Rp rounded to four places into the next step; from the
    // unrounded ones the figures differ by up to 4e-5, hence four decimals here.
    expect(r.ev.sd).toBeCloseTo(0.20188, 4)
    expect(r.av.sd).toBeCloseTo(0.22963, 4)
    expect(r.grr.sd).toBeCloseTo(0.30575, 4)
    expect(r.pv.sd).toBeCloseTo(1.10456, 4)
    expect(r.tv.sd).toBeCloseTo(1.1461, 4)
    // Fed the manual's rounded intermediates, the same formulas give its figures to the fifth decimal
    // (hand check of the formulas the module uses: EV = R̿·K1, AV = √((X̄diff·K2)² − EV²/(n·r))).
    const ev = 0.3417 * 0.5908
    expect(ev).toBeCloseTo(0.20188, 5)
    expect(Math.sqrt((0.4446 * 0.5231) ** 2 - ev ** 2 / 30)).toBeCloseTo(0.22963, 5)
  })

  it('reproduces the printed %GRR, the other percentages and ndc', () => {
    expect(r.grr.pctOfTotal).toBeCloseTo(26.68, 2) // AIAG printed 26.68 %
    // %EV 17.62, %AV 20.04, %PV 96.38 (from memory of the manual); one decimal, its rounding as above.
    expect(r.ev.pctOfTotal).toBeCloseTo(17.6, 1)
    expect(r.av.pctOfTotal).toBeCloseTo(20.04, 1)
    expect(r.pv.pctOfTotal).toBeCloseTo(96.38, 1)
    expect(r.ndc).toBe(5) // AIAG printed: ndc = 1.41·(1.10456/0.30575) = 5.09 → 5
    expect(r.band).toBe('conditional') // 10–30 %: AIAG's middle band
    expect(r.flags).toEqual([])
  })
})

describe('AIAG MSA 4th ed. example, ANOVA method', () => {
  const s = gaugeStudy(aiagReadings())
  const a = s.anova

  it('reproduces the printed ANOVA table (from memory of the manual: df, SS, MS)', () => {
    // Appraiser 2 / 3.1673 / 1.58363; Parts 9 / 88.3619 / 9.81799; Appraiser by part 18 / 0.3590 / 0.01994;
    // Equipment 60 / 2.7589 / 0.04598; Total 89 / 94.6471.
    const t = a.full
    expect([t.appraisers.df, t.parts.df, t.interaction!.df, t.repeatability.df, t.total.df]).toEqual([2, 9, 18, 60, 89])
    expect(t.appraisers.ss).toBeCloseTo(3.1673, 4)
    expect(t.parts.ss).toBeCloseTo(88.3619, 4)
    expect(t.interaction!.ss).toBeCloseTo(0.359, 4)
    expect(t.repeatability.ss).toBeCloseTo(2.7589, 4)
    expect(t.total.ss).toBeCloseTo(94.6471, 4)
    expect(t.appraisers.ms).toBeCloseTo(1.58363, 5)
    expect(t.parts.ms).toBeCloseTo(9.81799, 5)
    expect(t.interaction!.ms).toBeCloseTo(0.01994, 5)
    expect(t.repeatability.ms).toBeCloseTo(0.04598, 5)
  })

  it('gives the F ratios of the manual (all over MS_E) and of the random-effects model (over MS_PA)', () => {
    const t = a.full
    // The manual prints F = 34.44 (appraisers), 213.52 (parts), 0.434 (interaction), each MS over the
    // equipment MS (from memory).
    expect(t.appraisers.ms! / t.repeatability.ms!).toBeCloseTo(34.44, 2)
    expect(t.parts.ms! / t.repeatability.ms!).toBeCloseTo(213.52, 2)
    expect(t.interaction!.f).toBeCloseTo(0.434, 3)
    // The module tests parts and appraisers against the interaction (Montgomery's expected mean squares):
    // 492.29 and 79.41, interaction p = 0.974 (the figures general statistics packages print for this
    // data with the interaction in the model; from memory).
    expect(t.parts.f).toBeCloseTo(492.29, 2)
    expect(t.appraisers.f).toBeCloseTo(79.41, 2)
    expect(t.interaction!.p).toBeCloseTo(0.974, 3)
    expect(t.interaction!.testedAgainst).toBe('repeatability')
    expect(t.parts.testedAgainst).toBe('interaction')
  })

  it('pools the interaction (p = 0.974 > 0.25) into repeatability', () => {
    expect(a.interactionPooled).toBe(true)
    expect(a.flags).toContainEqual({ code: 'interaction_pooled', p: expect.closeTo(0.974, 3), alpha: 0.25 })
    const t = a.pooled!
    expect(t.interaction).toBeNull()
    expect(t.repeatability.df).toBe(78)
    expect(t.repeatability.ss).toBeCloseTo(0.359 + 2.7589, 4)
    // Hand check: (0.3590 + 2.7589)/78 = 0.039973.
    expect(t.repeatability.ms).toBeCloseTo(0.039973, 6)
    expect(t.parts.testedAgainst).toBe('repeatability')
  })

  it('reproduces the printed ANOVA results (from memory of the manual)', () => {
    // Variances: EV 0.039973, AV 0.051455, INT 0, GRR 0.09143, PV 1.086446.
    expect(a.ev.variance).toBeCloseTo(0.039973, 6)
    expect(a.av.variance).toBeCloseTo(0.051455, 6)
    expect(a.interaction.variance).toBe(0)
    expect(a.grr.variance).toBeCloseTo(0.09143, 5)
    expect(a.pv.variance).toBeCloseTo(1.086446, 5) // 1.0864466 unrounded: the manual's last digit differs by 1
    // Standard deviations: EV 0.199933, AV 0.226838, GRR 0.302373, PV 1.042327, TV 1.085.
    expect(a.ev.sd).toBeCloseTo(0.199933, 6)
    expect(a.av.sd).toBeCloseTo(0.226838, 6)
    expect(a.grr.sd).toBeCloseTo(0.302373, 5)
    expect(a.pv.sd).toBeCloseTo(1.042327, 6)
    expect(a.tv.sd).toBeCloseTo(1.085, 3)
    // % of total variation: EV 18.4, AV 20.9, INT 0, GRR 27.9, PV 96.0; % contribution: 3.4, 4.4, 0, 7.8, 92.2.
    expect([a.ev, a.av, a.interaction, a.grr, a.pv].map((c) => Number(c.pctOfTotal!.toFixed(1)))).toEqual([18.4, 20.9, 0, 27.9, 96.0])
    expect([a.ev, a.av, a.interaction, a.grr, a.pv].map((c) => Number(c.pctContribution!.toFixed(1)))).toEqual([3.4, 4.4, 0, 7.8, 92.2])
    // ndc = 1.41·(1.042327/0.302373) = 4.86 → 4 (printed 4).
    expect(a.ndc).toBe(4)
    expect(a.band).toBe('conditional')
  })

  it('states %GRR of the tolerance with 6σ by default and with 5.15σ when asked', () => {
    // Hand check on the printed GRR: 100·6·0.302373/5 = 36.28 %; 100·5.15·0.302373/5 = 31.14 %.
    const six = gaugeStudy(aiagReadings(), { tolerance: 5 })
    expect(six.studyMultiplier).toBe(6)
    expect(six.anova.grr.pctOfTolerance).toBeCloseTo(36.28, 2)
    expect(six.anova.toleranceBand).toBe('unacceptable')
    expect(six.range!.grr.pctOfTolerance).toBeCloseTo((100 * 6 * six.range!.grr.sd) / 5, 10)
    const older = gaugeStudy(aiagReadings(), { tolerance: 5, studyMultiplier: 5.15 })
    expect(older.anova.grr.pctOfTolerance).toBeCloseTo(31.14, 2)
    expect(s.anova.grr.pctOfTolerance).toBeNull()
    expect(s.anova.toleranceBand).toBeNull()
  })
})

// ---------------------------------------------------------------------------------------------
// Second computation

interface PlainAnova {
  ss: { p: number; a: number; ab: number; e: number; t: number }
  df: { p: number; a: number; ab: number; e: number }
}

/**
 * Two-way crossed ANOVA from totals (Montgomery, the two-factor factorial's computational formulas):
 * SS_T = Σy² − y…²/N, SS_P = Σyᵢ..²/(a·r) − y…²/N, SS_A = Σy.ⱼ.²/(p·r) − y…²/N,
 * SS_sub = Σyᵢⱼ.²/r − y…²/N, SS_PA = SS_sub − SS_P − SS_A, SS_E = SS_T − SS_sub.
 */
function plainAnova(y: number[][][]): PlainAnova {
  const p = y.length
  const a = y[0]!.length
  const r = y[0]![0]!.length
  const sum = (xs: number[]) => xs.reduce((s, x) => s + x, 0)
  const N = p * a * r
  const grand = sum(y.flat(2))
  const cf = (grand * grand) / N
  const ssT = sum(y.flat(2).map((v) => v * v)) - cf
  const ssP = sum(y.map((row) => sum(row.flat()) ** 2)) / (a * r) - cf
  const ssA = sum(Array.from({ length: a }, (_, j) => sum(y.map((row) => sum(row[j]!))) ** 2)) / (p * r) - cf
  const ssSub = sum(y.flatMap((row) => row.map((cell) => sum(cell) ** 2))) / r - cf
  return {
    ss: { p: ssP, a: ssA, ab: ssSub - ssP - ssA, e: ssT - ssSub, t: ssT },
    df: { p: p - 1, a: a - 1, ab: (p - 1) * (a - 1), e: p * a * (r - 1) },
  }
}

function cube(s: GaugeStudy, readings: GaugeMeasurement[]): number[][][] {
  return s.design.parts.map((part) =>
    s.design.appraisers.map((appraiser) => readings.filter((m) => m.part === part && m.appraiser === appraiser).map((m) => m.value)),
  )
}

/** Deterministic normal deviates (Park–Miller generator, Box–Muller), so the test is repeatable. */
function normals(seed: number): () => number {
  let state = seed
  const uniform = () => (state = (state * 48271) % 2147483647) / 2147483647
  return () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform())
}

function randomStudy(seed: number, parts: number, appraisers: number, trials: number, sd: { part: number; appraiser: number; interaction: number; error: number }) {
  const z = normals(seed)
  const partEffect = Array.from({ length: parts }, () => sd.part * z())
  const appraiserEffect = Array.from({ length: appraisers }, () => sd.appraiser * z())
  const inter = Array.from({ length: parts }, () => Array.from({ length: appraisers }, () => sd.interaction * z()))
  return study(parts, appraisers, trials, (i, j) => 10 + partEffect[i]! + appraiserEffect[j]! + inter[i]![j]! + sd.error * z())
}

describe('second computation: textbook two-way ANOVA and jStat F distribution', () => {
  const cases: [string, GaugeMeasurement[]][] = [
    ['AIAG example', aiagReadings()],
    ['5 parts × 2 stations × 4 trials, strong interaction', randomStudy(7, 5, 2, 4, { part: 2, appraiser: 0.3, interaction: 0.8, error: 0.2 })],
    ['12 parts × 4 stations × 2 trials', randomStudy(11, 12, 4, 2, { part: 1, appraiser: 0.1, interaction: 0, error: 0.3 })],
  ]

  it.each(cases)('%s: the same sums of squares, mean squares, F and p-values', (_, readings) => {
    const s = gaugeStudy(readings, { pooling: 'never' })
    const ref = plainAnova(cube(s, readings))
    const t = s.anova.full
    for (const [row, ss, df] of [
      [t.parts, ref.ss.p, ref.df.p],
      [t.appraisers, ref.ss.a, ref.df.a],
      [t.interaction!, ref.ss.ab, ref.df.ab],
      [t.repeatability, ref.ss.e, ref.df.e],
    ] as const) {
      expect(row.ss, row.source).toBeCloseTo(ss, 9)
      expect(row.df, row.source).toBe(df)
      expect(row.ms!, row.source).toBeCloseTo(ss / df, 9)
    }
    expect(t.total.ss).toBeCloseTo(ref.ss.t, 9)
    const msAB = ref.ss.ab / ref.df.ab
    const msE = ref.ss.e / ref.df.e
    const tests = [
      [t.parts, ref.ss.p / ref.df.p / msAB, ref.df.p, ref.df.ab],
      [t.appraisers, ref.ss.a / ref.df.a / msAB, ref.df.a, ref.df.ab],
      [t.interaction!, msAB / msE, ref.df.ab, ref.df.e],
    ] as const
    for (const [row, f, d1, d2] of tests) {
      // Seven digits: the totals formulas lose some to cancellation when a small SS is the difference of large totals.
      expect(row.f! / f, row.source).toBeCloseTo(1, 7)
      // jStat gives the cdf: compare the complement, absolutely (its 1 − cdf cannot show the tiny p of the parts);
      // its incomplete beta function is good to about 1e-9.
      expect(1 - row.p!, row.source).toBeCloseTo(centralF.cdf(f, d1, d2), 7)
    }
  })

  it.each(cases)('%s: variance components from the expected mean squares, with and without pooling', (_, readings) => {
    const [p, a, r] = [new Set(readings.map((m) => m.part)).size, new Set(readings.map((m) => m.appraiser)).size, readings.length / new Set(readings.map((m) => `${m.part}|${m.appraiser}`)).size]
    const kept = gaugeStudy(readings, { pooling: 'never' })
    const ref = plainAnova(cube(kept, readings))
    const ms = { p: ref.ss.p / ref.df.p, a: ref.ss.a / ref.df.a, ab: ref.ss.ab / ref.df.ab, e: ref.ss.e / ref.df.e }
    // Montgomery: σ² = MS_E, σ²_PA = (MS_PA − MS_E)/r, σ²_A = (MS_A − MS_PA)/(p·r), σ²_P = (MS_P − MS_PA)/(a·r).
    expect(kept.anova.estimates.repeatability).toBeCloseTo(ms.e, 9)
    expect(kept.anova.estimates.interaction).toBeCloseTo((ms.ab - ms.e) / r, 9)
    expect(kept.anova.estimates.appraiser).toBeCloseTo((ms.a - ms.ab) / (p * r), 9)
    expect(kept.anova.estimates.part).toBeCloseTo((ms.p - ms.ab) / (a * r), 9)
    expect(kept.anova.grr.variance).toBeCloseTo(ms.e + Math.max(0, (ms.ab - ms.e) / r) + Math.max(0, (ms.a - ms.ab) / (p * r)), 9)
    // Reduced model: MS_pooled = (SS_PA + SS_E)/(df_PA + df_E) replaces MS_PA and MS_E.
    const pooled = gaugeStudy(readings, { pooling: 'always' })
    const msPool = (ref.ss.ab + ref.ss.e) / (ref.df.ab + ref.df.e)
    expect(pooled.anova.estimates.repeatability).toBeCloseTo(msPool, 9)
    expect(pooled.anova.estimates.appraiser).toBeCloseTo((ms.a - msPool) / (p * r), 9)
    expect(pooled.anova.estimates.part).toBeCloseTo((ms.p - msPool) / (a * r), 9)
    expect(pooled.anova.pooled!.parts.f).toBeCloseTo(ms.p / msPool, 6)
    expect(1 - pooled.anova.pooled!.parts.p!).toBeCloseTo(centralF.cdf(ms.p / msPool, ref.df.p, ref.df.ab + ref.df.e), 7)
  })

  it('keeps the strong interaction of the second case under the default α = 0.25', () => {
    const s = gaugeStudy(cases[1]![1])
    expect(s.anova.full.interaction!.p!).toBeLessThan(0.25)
    expect(s.anova.interactionPooled).toBe(false)
    expect(s.anova.pooled).toBeNull()
    expect(s.anova.interaction.sd).toBeGreaterThan(0)
    // GRR² = EV² + AV² + INT² (AIAG ANOVA method).
    expect(s.anova.grr.variance).toBeCloseTo(s.anova.ev.variance + s.anova.av.variance + s.anova.interaction.variance, 12)
  })

  it('computes an upper F tail that agrees with jStat and keeps its tiny values', () => {
    for (const [f, d1, d2] of [[0.434, 18, 60], [1, 3, 7], [2.5, 9, 18], [39.6, 2, 78]] as const) {
      expect(1 - fUpperTail(f, d1, d2)).toBeCloseTo(centralF.cdf(f, d1, d2), 8)
    }
    // P(F(2, d2) > f) has the closed form (1 + 2f/d2)^(−d2/2): checks a p far below what 1 − cdf can show.
    expect(fUpperTail(500, 2, 60) / (1 + (2 * 500) / 60) ** -30).toBeCloseTo(1, 9)
    expect(fUpperTail(0, 2, 60)).toBe(1)
  })
})

// ---------------------------------------------------------------------------------------------
// Refusals

describe('design check and refusals', () => {
  it('names a missing cell and refuses the study', () => {
    const readings = aiagReadings().filter((m) => !(m.part === 'P7' && m.appraiser === 'B'))
    const design = checkGaugeDesign(readings)
    expect(design.balanced).toBe(false)
    expect(design.missingCells).toEqual([{ part: 'P7', appraiser: 'B' }])
    const e = refusal(() => gaugeStudy(readings))
    expect(e.code).toBe('unbalanced_study')
    expect(e.message).toContain('P7 × B')
    expect(e.details).toMatchObject({ missingCells: [{ part: 'P7', appraiser: 'B' }], expectedTrials: 3 })
  })

  it('refuses an extra trial in one cell and names the cell', () => {
    const readings = [...aiagReadings(), { part: 'P3', appraiser: 'C', trial: 4, value: 0.8 }]
    const e = refusal(() => gaugeStudy(readings))
    expect(e.code).toBe('unbalanced_study')
    expect(e.message).toContain('P3 × C (4)')
    expect(e.details.unevenCells).toEqual([{ part: 'P3', appraiser: 'C', trials: 4 }])
  })

  it('refuses a lost reading and a trial number given twice', () => {
    const lost = aiagReadings().filter((m) => !(m.part === 'P10' && m.appraiser === 'A' && m.trial === 2))
    expect(refusal(() => gaugeStudy(lost)).details.unevenCells).toEqual([{ part: 'P10', appraiser: 'A', trials: 2 }])
    const twice = aiagReadings().map((m) => (m.part === 'P1' && m.appraiser === 'A' && m.trial === 3 ? { ...m, trial: 2 } : m))
    const e = refusal(() => gaugeStudy(twice))
    expect(e.code).toBe('unbalanced_study')
    expect(e.details.repeatedTrials).toEqual([{ part: 'P1', appraiser: 'A', trial: 2, times: 2 }])
    expect(e.message).toContain('P1 × A trial 2')
  })

  it('refuses fewer than 2 appraisers, 2 parts or 2 trials', () => {
    const oneAppraiser = aiagReadings().filter((m) => m.appraiser === 'A')
    const e = refusal(() => gaugeStudy(oneAppraiser))
    expect(e.code).toBe('too_few_points')
    expect(e.message).toContain('2 appraisers')
    expect(refusal(() => gaugeStudy(aiagReadings().filter((m) => m.part === 'P1'))).message).toContain('2 parts')
    expect(refusal(() => gaugeStudy(aiagReadings().filter((m) => m.trial === 1))).message).toContain('2 trials')
    expect(refusal(() => gaugeStudy([])).code).toBe('too_few_points')
  })

  it('refuses a reading that is not a finite number, and options out of range', () => {
    const bad = aiagReadings().map((m, i) => (i === 17 ? { ...m, value: Number.NaN } : m))
    expect(refusal(() => gaugeStudy(bad)).code).toBe('non_finite_value')
    for (const opts of [{ tolerance: 0 }, { tolerance: -1 }, { studyMultiplier: 0 }, { poolAlpha: 1 }, { poolAlpha: 0 }]) {
      expect(refusal(() => gaugeStudy(aiagReadings(), opts)).code, JSON.stringify(opts)).toBe('invalid_option')
    }
  })

  it('orders names naturally and lists every distinct trial', () => {
    const d = checkGaugeDesign(study(11, 2, 2, (i) => i))
    expect(d.parts.slice(0, 3)).toEqual(['P1', 'P2', 'P3'])
    expect(d.parts.at(-1)).toBe('P11')
    expect(d.trials).toEqual([1, 2])
  })

  it('leaves the range method out, with a reason, outside the tabulated constants', () => {
    const fourTrials = gaugeStudy(study(5, 2, 4, (i, j, k) => i + 0.01 * j + 0.001 * ((k * 7) % 3)))
    expect(fourTrials.range).toBeNull()
    expect(fourTrials.rangeRefusal).toContain('K1')
    expect(fourTrials.anova.grr.sd).toBeGreaterThan(0)
    const elevenParts = gaugeStudy(study(11, 3, 2, (i, j, k) => i + 0.02 * j + 0.01 * k))
    expect(elevenParts.range).toBeNull()
    expect(elevenParts.rangeRefusal).toContain('K3')
    const fourStations = gaugeStudy(study(5, 4, 2, (i, j, k) => i + 0.02 * j + 0.01 * k))
    expect(fourStations.rangeRefusal).toContain('K2')
  })
})

// ---------------------------------------------------------------------------------------------
// Edge cases

describe('edge cases', () => {
  it('reports a perfect gauge: no repeatability or reproducibility error, ndc unbounded', () => {
    const s = gaugeStudy(study(5, 3, 3, (i) => 1 + i))
    for (const m of [s.anova, s.range!]) {
      expect(m.ev.sd).toBe(0)
      expect(m.av.sd).toBe(0)
      expect(m.grr.sd).toBe(0)
      expect(m.grr.pctOfTotal).toBe(0)
      expect(m.ndc).toBeNull()
      expect(m.band).toBe('acceptable')
      expect(m.flags).toContainEqual({ code: 'no_repeatability_error' })
      expect(m.flags).toContainEqual({ code: 'no_measurement_error' })
    }
    // MS_PA = MS_E = 0: the interaction's F and p do not exist, and pooling changes nothing.
    expect(s.anova.full.interaction).toMatchObject({ f: null, p: null })
    expect(s.anova.full.parts).toMatchObject({ f: null, p: 0 })
  })

  it('finds the reproducibility of a gauge that repeats exactly but reads one station 0.1 higher', () => {
    // Hand check: appraiser means differ by 0.1, so SS_A = p·r·2·0.05² and σ²_A = MS_A/(p·r) = 0.005:
    // AV = √0.005 = 0.1/√2. Range method: AV = X̄diff·K2 = 0.1·0.7071 (EV = 0).
    const s = gaugeStudy(study(6, 2, 3, (i, j) => 2 + 0.5 * i + 0.1 * j))
    expect(s.anova.ev.sd).toBe(0)
    expect(s.anova.av.sd).toBeCloseTo(0.1 / Math.SQRT2, 12)
    expect(s.range!.ev.sd).toBe(0)
    expect(s.range!.av.sd).toBeCloseTo(0.07071, 12)
  })

  it('sets negative variance components to 0 and flags them', () => {
    // Pure interaction: cell means 0, 2 / 2, 0, trials ±0.1. Hand check: part and appraiser means all 1,
    // so SS_P = SS_A = 0; SS_PA = 2·4·1² = 8 (df 1); SS_E = 8·0.01 = 0.08 (df 4, MS_E = 0.02).
    // σ²_PA = (8 − 0.02)/2 = 3.99; σ²_A = σ²_P = (0 − 8)/(2·2) = −2 → 0.
    const s = gaugeStudy(study(2, 2, 2, (i, j, k) => (i === j ? 0 : 2) + (k === 0 ? -0.1 : 0.1)))
    const a = s.anova
    expect(a.interactionPooled).toBe(false)
    expect(a.estimates.appraiser).toBeCloseTo(-2, 12)
    expect(a.estimates.part).toBeCloseTo(-2, 12)
    expect(a.flags).toContainEqual({ code: 'negative_variance_set_to_zero', component: 'appraiser', estimate: expect.closeTo(-2, 12) })
    expect(a.flags).toContainEqual({ code: 'negative_variance_set_to_zero', component: 'part', estimate: expect.closeTo(-2, 12) })
    expect(a.av.sd).toBe(0)
    expect(a.pv.sd).toBe(0)
    expect(a.interaction.variance).toBeCloseTo(3.99, 12)
    expect(a.grr.variance).toBeCloseTo(4.01, 12)
    expect(a.ndc).toBe(1) // ⌊0⌋ raised to AIAG's floor of 1
    expect(a.band).toBe('unacceptable')
  })

  it('sets a negative average-and-range AV to 0 and flags it', () => {
    // Stations with equal averages (X̄diff = 0) and repeatability error: AV² = 0 − EV²/(n·r) < 0.
    // 4 parts, 2 stations, 3 trials at −0.1, 0, +0.1 (reversed for the second station): every range 0.2.
    const s = gaugeStudy(study(4, 2, 3, (i, j, k) => i + (k - 1) * 0.1 * (j === 0 ? 1 : -1)))
    expect(s.range!.xDiff).toBeCloseTo(0, 12)
    expect(s.range!.av.sd).toBe(0)
    // EV = R̿·K1 = 0.2·0.5908; estimate = −EV²/(n·r) = −EV²/(4·3).
    expect(s.range!.flags).toEqual([{ code: 'negative_av_set_to_zero', estimate: expect.closeTo(-((0.2 * 0.5908) ** 2) / 12, 12) }])
  })

  it('bands %GRR at AIAG 10 % and 30 % and truncates ndc', () => {
    expect([9.99, 10, 30, 30.01].map(grrBand)).toEqual(['acceptable', 'conditional', 'conditional', 'unacceptable'])
    expect(distinctCategories(10, 1)).toBe(14) // 1.41·10 = 14.1 → 14
    expect(distinctCategories(0.1, 1)).toBe(1)
    expect(distinctCategories(1, 0)).toBeNull()
  })
})
