/**
 * Gauge repeatability and reproducibility (gauge R&R) of a crossed study: every appraiser (an
 * operator, or a station standing in for one) measures every part the same number of times, and
 * the spread of the readings is split into what the measuring system adds (repeatability EV,
 * reproducibility AV) and what the parts really differ by (PV).
 *
 * Two methods, side by side:
 * - ANOVA method: a two-way crossed analysis of variance with the part × appraiser interaction,
 *   variance components from the expected mean squares of the random-effects model, the
 *   interaction pooled into the repeatability error when it is not significant. Sources: AIAG,
 *   Measurement Systems Analysis reference manual, 4th edition (2010), chapter III section B
 *   ("Analysis of Variance (ANOVA) Method"); D. C. Montgomery, Introduction to Statistical Quality
 *   Control, the section on gauge and measurement system capability studies (gauge R&R by ANOVA:
 *   F tests of parts and appraisers against the interaction mean square, σ̂² from the mean squares,
 *   a negative estimate set to zero, the reduced model when the interaction is not significant).
 * - Average-and-range method: AIAG MSA 4th ed., chapter III section B ("Average and Range
 *   Method"), with the constants K1, K2, K3 of its report form (K = 1/d2*).
 *
 * Figures are standard deviations (σ). AIAG 4th ed. reports them as 1σ and compares GRR with the
 * tolerance as 6·GRR / tolerance (earlier editions used 5.15σ); the multiplier is an option.
 * Percentages of the total variation are ratios of σ (they do not add up to 100); the "contribution"
 * percentages are ratios of variances (they do).
 *
 * Pure: explicit imports, no Nuxt, h3 or database. The F distribution comes from a stdlib package
 * (registry), not from code of our own.
 */
import fCdf from '@stdlib/stats-base-dists-f-cdf'
import { StatsError } from './errors.ts'

// ---------------------------------------------------------------------------------------------
// Constants

/**
 * AIAG MSA 4th ed. acceptance of %GRR (of the total variation, or of the tolerance): under 10 %
 * acceptable, 10 % to 30 % may be acceptable depending on the use (here 'conditional'), over 30 %
 * not acceptable. The two boundaries themselves fall in the middle band.
 */
export const GRR_ACCEPTABLE_BELOW_PCT = 10
export const GRR_UNACCEPTABLE_ABOVE_PCT = 30
export type GrrBand = 'acceptable' | 'conditional' | 'unacceptable'

/** ndc = 1.41·PV/GRR, truncated, at least 1 (AIAG MSA 4th ed.; 1.41 ≈ √2). */
export const NDC_FACTOR = 1.41

/** Study-variation multiplier of AIAG MSA 4th ed.: 6σ (99.73 % of a normal population); older editions 5.15σ (99 %). */
export const DEFAULT_STUDY_MULTIPLIER = 6

/**
 * Significance level above which the interaction is pooled into the repeatability error. 0.25 is
 * the level the AIAG MSA manual is usually quoted with (from memory: not checked against the
 * manual's text); Minitab's gauge R&R defaults to 0.05 and names 0.25 as the level to choose to
 * keep the interaction in the model more readily (support.minitab.com, "Gage R&R Study" defaults,
 * "Alpha to remove interaction term").
 */
export const DEFAULT_POOL_ALPHA = 0.25

/** K1 by number of trials (AIAG MSA 4th ed., average-and-range report form). */
export const K1_BY_TRIALS: Readonly<Record<number, number>> = { 2: 0.8862, 3: 0.5908 }
/** K2 by number of appraisers (same form). */
export const K2_BY_APPRAISERS: Readonly<Record<number, number>> = { 2: 0.7071, 3: 0.5231 }
/** K3 by number of parts (same form). */
export const K3_BY_PARTS: Readonly<Record<number, number>> = {
  2: 0.7071, 3: 0.5231, 4: 0.4467, 5: 0.403, 6: 0.3742, 7: 0.3534, 8: 0.3375, 9: 0.3249, 10: 0.3146,
}

/** Cells named in a refusal's message before "and n more" (our choice: the details carry them all). */
const MAX_CELLS_IN_MESSAGE = 12

// ---------------------------------------------------------------------------------------------
// Types

/** One reading: which part, by which appraiser (operator or station), which repetition. */
export interface GaugeMeasurement {
  part: string
  appraiser: string
  trial: number
  value: number
}

export interface GaugeCell {
  part: string
  appraiser: string
}

/** What the readings hold, and where they fall short of a complete, balanced crossed study. */
export interface GaugeDesign {
  /** Names in natural order ("P2" before "P10"). */
  parts: string[]
  appraisers: string[]
  /** Distinct trial numbers seen, ascending. */
  trials: number[]
  /** The number of readings most cells hold (ties: the larger); null without readings. */
  trialsPerCell: number | null
  /** Part × appraiser pairs with no reading. */
  missingCells: GaugeCell[]
  /** Cells holding another number of readings than trialsPerCell. */
  unevenCells: (GaugeCell & { trials: number })[]
  /** A trial number given twice (or more) in one cell. */
  repeatedTrials: (GaugeCell & { trial: number; times: number })[]
  /** No missing, uneven or repeated cells. */
  balanced: boolean
}

export interface GaugeStudyOptions {
  /** Upper − lower specification limit; enables the % of tolerance figures. */
  tolerance?: number | null
  /** σ multiplier for the % of tolerance (default 6, AIAG 4th ed.; 5.15 for the older convention). */
  studyMultiplier?: number
  /** Pool the interaction when its p-value is above this level (default 0.25). */
  poolAlpha?: number
  /** 'auto' (default): pool by poolAlpha; 'always' / 'never' override the test. */
  pooling?: 'auto' | 'always' | 'never'
}

export type AnovaSource = 'parts' | 'appraisers' | 'interaction' | 'repeatability' | 'total'

export interface AnovaRow {
  source: AnovaSource
  df: number
  ss: number
  /** Null for the total row. */
  ms: number | null
  /** Null for the error and total rows, and when the denominator mean square is 0. */
  f: number | null
  /** Upper-tail p-value of f; 0 when the denominator is 0 and the numerator is not; null when both are 0. */
  p: number | null
  /** The row whose mean square f is divided by. */
  testedAgainst: AnovaSource | null
}

export interface AnovaTable {
  parts: AnovaRow
  appraisers: AnovaRow
  /** Null in the pooled table: its sum of squares is inside repeatability. */
  interaction: AnovaRow | null
  repeatability: AnovaRow
  total: AnovaRow
}

/** One source of variation, as σ and as shares. */
export interface GaugeComponent {
  sd: number
  variance: number
  /** 100·σ/TV; null when TV = 0. */
  pctOfTotal: number | null
  /** 100·σ²/TV²; null when TV = 0. */
  pctContribution: number | null
  /** 100·multiplier·σ/tolerance; null without a tolerance. */
  pctOfTolerance: number | null
}

export type VarianceComponentName = 'appraiser' | 'interaction' | 'part'

export type GaugeFlag =
  /** A method-of-moments estimate came out below zero and is reported as 0. */
  | { code: 'negative_variance_set_to_zero'; component: VarianceComponentName; estimate: number }
  /** Average-and-range: (X̄diff·K2)² − EV²/(n·r) < 0, so AV is reported as 0. */
  | { code: 'negative_av_set_to_zero'; estimate: number }
  /** The interaction was pooled into repeatability (p is its p-value, null when undefined). */
  | { code: 'interaction_pooled'; p: number | null; alpha: number | null }
  /** Every cell's readings are identical: no repeatability error. */
  | { code: 'no_repeatability_error' }
  /** GRR = 0: ndc is unbounded and reported as null. */
  | { code: 'no_measurement_error' }
  /** TV = 0: no percentage of the total variation exists. */
  | { code: 'no_total_variation' }

export interface GaugeFigures {
  /** Repeatability (equipment variation). */
  ev: GaugeComponent
  /** Reproducibility (appraiser variation). */
  av: GaugeComponent
  grr: GaugeComponent
  pv: GaugeComponent
  tv: GaugeComponent
  /** Number of distinct categories; null when GRR = 0. */
  ndc: number | null
  /** Band of %GRR of the total variation; null when TV = 0. */
  band: GrrBand | null
  /** Band of %GRR of the tolerance; null without a tolerance. */
  toleranceBand: GrrBand | null
  flags: GaugeFlag[]
}

export interface GaugeAnovaResult extends GaugeFigures {
  method: 'anova'
  /** Part × appraiser interaction (0 when pooled). */
  interaction: GaugeComponent
  /** The full two-way table with interaction. */
  full: AnovaTable
  /** The table after pooling the interaction into repeatability; null when it was kept. */
  pooled: AnovaTable | null
  interactionPooled: boolean
  /** Variance components before negative ones were set to 0. */
  estimates: { repeatability: number; appraiser: number; interaction: number; part: number }
}

export interface GaugeRangeResult extends GaugeFigures {
  method: 'range'
  k1: number
  k2: number
  k3: number
  /** R̿: the mean of the appraisers' average ranges. */
  rBarBar: number
  /** Max − min of the appraiser averages. */
  xDiff: number
  /** Max − min of the part averages. */
  rp: number
  appraiserAverages: Record<string, number>
  appraiserAverageRanges: Record<string, number>
  partAverages: Record<string, number>
}

export interface GaugeStudy {
  design: GaugeDesign
  n: number
  tolerance: number | null
  studyMultiplier: number
  poolAlpha: number
  pooling: 'auto' | 'always' | 'never'
  anova: GaugeAnovaResult
  /** Null when the design is outside the tabulated K constants (see rangeRefusal). */
  range: GaugeRangeResult | null
  rangeRefusal: string | null
}

// ---------------------------------------------------------------------------------------------
// Design check

const NATURAL = new Intl.Collator('en', { numeric: true })

function cellName(c: GaugeCell): string {
  return `${c.part} × ${c.appraiser}`
}

function checkReadings(measurements: readonly GaugeMeasurement[]): void {
  for (const m of measurements) {
    if (!Number.isFinite(m.value)) {
      throw new StatsError('non_finite_value', `The reading of part ${m.part} by ${m.appraiser}, trial ${m.trial}, is not a finite number (${m.value})`)
    }
    if (!Number.isFinite(m.trial)) {
      throw new StatsError('non_finite_value', `A trial number of part ${m.part} by ${m.appraiser} is not a finite number (${m.trial})`)
    }
  }
}

/** Readings grouped by part, then appraiser. */
function groupCells(measurements: readonly GaugeMeasurement[]): Map<string, Map<string, GaugeMeasurement[]>> {
  const byPart = new Map<string, Map<string, GaugeMeasurement[]>>()
  for (const m of measurements) {
    let row = byPart.get(m.part)
    if (!row) byPart.set(m.part, (row = new Map()))
    const cell = row.get(m.appraiser)
    if (cell) cell.push(m)
    else row.set(m.appraiser, [m])
  }
  return byPart
}

/**
 * The parts, appraisers and trials the readings hold, and the cells that keep them from a
 * complete, balanced crossed study. Does not refuse an unbalanced study (a page can show what is
 * missing); `gaugeStudy` does.
 * @throws StatsError `non_finite_value` for a reading or trial number that is not a finite number.
 */
export function checkGaugeDesign(measurements: readonly GaugeMeasurement[]): GaugeDesign {
  checkReadings(measurements)
  const parts = [...new Set(measurements.map((m) => m.part))].sort(NATURAL.compare)
  const appraisers = [...new Set(measurements.map((m) => m.appraiser))].sort(NATURAL.compare)
  const trials = [...new Set(measurements.map((m) => m.trial))].sort((a, b) => a - b)
  const cells = groupCells(measurements)

  // The expected count per cell: the most common one (ties: the larger), so one cell with an extra
  // or a lost reading is the one named, not all the others.
  const countTally = new Map<number, number>()
  for (const row of cells.values()) for (const cell of row.values()) countTally.set(cell.length, (countTally.get(cell.length) ?? 0) + 1)
  let trialsPerCell: number | null = null
  let best = 0
  for (const [count, cellsWithIt] of countTally) {
    if (cellsWithIt > best || (cellsWithIt === best && trialsPerCell !== null && count > trialsPerCell)) {
      trialsPerCell = count
      best = cellsWithIt
    }
  }

  const missingCells: GaugeCell[] = []
  const unevenCells: (GaugeCell & { trials: number })[] = []
  const repeatedTrials: (GaugeCell & { trial: number; times: number })[] = []
  for (const part of parts) {
    for (const appraiser of appraisers) {
      const cell = cells.get(part)?.get(appraiser)
      if (!cell) {
        missingCells.push({ part, appraiser })
        continue
      }
      if (cell.length !== trialsPerCell) unevenCells.push({ part, appraiser, trials: cell.length })
      const seen = new Map<number, number>()
      for (const m of cell) seen.set(m.trial, (seen.get(m.trial) ?? 0) + 1)
      for (const [trial, times] of [...seen].sort((a, b) => a[0] - b[0])) {
        if (times > 1) repeatedTrials.push({ part, appraiser, trial, times })
      }
    }
  }
  const balanced = missingCells.length === 0 && unevenCells.length === 0 && repeatedTrials.length === 0
  return { parts, appraisers, trials, trialsPerCell, missingCells, unevenCells, repeatedTrials, balanced }
}

function listCells(items: string[]): string {
  if (items.length <= MAX_CELLS_IN_MESSAGE) return items.join(', ')
  return `${items.slice(0, MAX_CELLS_IN_MESSAGE).join(', ')} and ${items.length - MAX_CELLS_IN_MESSAGE} more`
}

function unbalancedError(design: GaugeDesign): StatsError {
  const parts: string[] = []
  if (design.missingCells.length > 0) parts.push(`no readings for ${listCells(design.missingCells.map(cellName))}`)
  if (design.unevenCells.length > 0) {
    parts.push(`${listCells(design.unevenCells.map((c) => `${cellName(c)} (${c.trials})`))} ${design.unevenCells.length === 1 ? 'has' : 'have'} another number of trials than the ${design.trialsPerCell} of the other cells`)
  }
  if (design.repeatedTrials.length > 0) {
    parts.push(`trial numbers given twice: ${listCells(design.repeatedTrials.map((c) => `${cellName(c)} trial ${c.trial}`))}`)
  }
  return new StatsError('unbalanced_study', `The gauge study is not complete and balanced: ${parts.join('; ')}`, {
    missingCells: design.missingCells,
    unevenCells: design.unevenCells,
    repeatedTrials: design.repeatedTrials,
    expectedTrials: design.trialsPerCell,
  })
}

// ---------------------------------------------------------------------------------------------
// Shared figures

function checkOptions(opts: GaugeStudyOptions): Required<Omit<GaugeStudyOptions, 'tolerance'>> & { tolerance: number | null } {
  const tolerance = opts.tolerance ?? null
  if (tolerance !== null && !(Number.isFinite(tolerance) && tolerance > 0)) {
    throw new StatsError('invalid_option', `The tolerance must be a finite number above 0 (got ${tolerance})`)
  }
  const studyMultiplier = opts.studyMultiplier ?? DEFAULT_STUDY_MULTIPLIER
  if (!(Number.isFinite(studyMultiplier) && studyMultiplier > 0)) {
    throw new StatsError('invalid_option', `The study multiplier must be a finite number above 0 (got ${studyMultiplier})`)
  }
  const poolAlpha = opts.poolAlpha ?? DEFAULT_POOL_ALPHA
  if (!(poolAlpha > 0 && poolAlpha < 1)) throw new StatsError('invalid_option', `The pooling level must lie between 0 and 1 (got ${poolAlpha})`)
  const pooling = opts.pooling ?? 'auto'
  if (!['auto', 'always', 'never'].includes(pooling)) throw new StatsError('invalid_option', `Pooling must be 'auto', 'always' or 'never' (got ${String(pooling)})`)
  return { tolerance, studyMultiplier, poolAlpha, pooling }
}

/** The band of a %GRR (AIAG MSA 4th ed.: < 10 acceptable, 10–30 conditional, > 30 unacceptable). */
export function grrBand(pct: number): GrrBand {
  if (pct < GRR_ACCEPTABLE_BELOW_PCT) return 'acceptable'
  if (pct <= GRR_UNACCEPTABLE_ABOVE_PCT) return 'conditional'
  return 'unacceptable'
}

/**
 * ndc = ⌊1.41·PV/GRR⌋, at least 1 (AIAG MSA 4th ed.); null when GRR = 0. The ratio is nudged by a
 * relative 1e-9 before truncating so a ratio that is a whole number up to rounding is not cut down
 * by one (our choice).
 */
export function distinctCategories(pv: number, grr: number): number | null {
  if (!(grr > 0)) return null
  return Math.max(1, Math.floor(((NDC_FACTOR * pv) / grr) * (1 + 1e-9)))
}

interface Scale {
  tvVariance: number
  tolerance: number | null
  studyMultiplier: number
}

function component(variance: number, s: Scale): GaugeComponent {
  const sd = Math.sqrt(variance)
  const tv = Math.sqrt(s.tvVariance)
  return {
    sd,
    variance,
    pctOfTotal: tv > 0 ? (100 * sd) / tv : null,
    pctContribution: s.tvVariance > 0 ? (100 * variance) / s.tvVariance : null,
    pctOfTolerance: s.tolerance === null ? null : (100 * s.studyMultiplier * sd) / s.tolerance,
  }
}

function figures(
  v: { ev: number; av: number; grr: number; pv: number },
  scale: Omit<Scale, 'tvVariance'>,
  flags: GaugeFlag[],
): GaugeFigures {
  const tvVariance = v.grr + v.pv
  const s: Scale = { ...scale, tvVariance }
  const grr = component(v.grr, s)
  const pv = component(v.pv, s)
  const ndc = distinctCategories(pv.sd, grr.sd)
  if (ndc === null) flags.push({ code: 'no_measurement_error' })
  if (!(tvVariance > 0)) flags.push({ code: 'no_total_variation' })
  return {
    ev: component(v.ev, s),
    av: component(v.av, s),
    grr,
    pv,
    tv: component(tvVariance, s),
    ndc,
    band: grr.pctOfTotal === null ? null : grrBand(grr.pctOfTotal),
    toleranceBand: grr.pctOfTolerance === null ? null : grrBand(grr.pctOfTolerance),
    flags,
  }
}

// ---------------------------------------------------------------------------------------------
// ANOVA method

/**
 * Upper-tail probability of an F(d1, d2) variable above f. The reciprocal of an F(d1, d2) variable
 * is F(d2, d1), so P(F > f) = P(F(d2, d1) < 1/f): the small tails come from the cdf directly,
 * without the cancellation of 1 − cdf.
 */
export function fUpperTail(f: number, d1: number, d2: number): number {
  if (!(f > 0)) return 1
  return fCdf(1 / f, d2, d1)
}

function fTest(num: number, den: number, d1: number, d2: number): { f: number | null; p: number | null } {
  if (den > 0) {
    const f = num / den
    return { f, p: fUpperTail(f, d1, d2) }
  }
  // A zero denominator: F is infinite (p = 0) when the numerator is not zero, undefined when it is.
  return { f: null, p: num > 0 ? 0 : null }
}

interface Cube {
  parts: string[]
  appraisers: string[]
  r: number
  /** values[i][j] = the readings of part i by appraiser j. */
  values: number[][][]
}

function mean(xs: readonly number[]): number {
  let s = 0
  for (const x of xs) s += x
  return s / xs.length
}

interface SumsOfSquares {
  ssP: number
  ssA: number
  ssAB: number
  ssE: number
  ssT: number
  partMeans: number[]
  appraiserMeans: number[]
}

/** Sums of squares from deviations about the grand, part, appraiser and cell means (two passes). */
function sumsOfSquares(c: Cube): SumsOfSquares {
  const p = c.parts.length
  const o = c.appraisers.length
  const r = c.r
  const cellMeans = c.values.map((row) => row.map(mean))
  const grand = mean(cellMeans.flat())
  const partMeans = cellMeans.map(mean)
  const appraiserMeans = c.appraisers.map((_, j) => mean(cellMeans.map((row) => row[j]!)))
  let ssP = 0
  for (const m of partMeans) ssP += (m - grand) ** 2
  ssP *= o * r
  let ssA = 0
  for (const m of appraiserMeans) ssA += (m - grand) ** 2
  ssA *= p * r
  let ssAB = 0
  let ssE = 0
  let ssT = 0
  for (let i = 0; i < p; i++) {
    for (let j = 0; j < o; j++) {
      const cm = cellMeans[i]![j]!
      ssAB += (cm - partMeans[i]! - appraiserMeans[j]! + grand) ** 2
      for (const y of c.values[i]![j]!) {
        ssE += (y - cm) ** 2
        ssT += (y - grand) ** 2
      }
    }
  }
  ssAB *= r
  return { ssP, ssA, ssAB, ssE, ssT, partMeans, appraiserMeans }
}

function row(source: AnovaSource, df: number, ss: number, test: { f: number | null; p: number | null } | null, against: AnovaSource | null): AnovaRow {
  return { source, df, ss, ms: source === 'total' ? null : ss / df, f: test?.f ?? null, p: test?.p ?? null, testedAgainst: against }
}

function anovaMethod(c: Cube, o: ReturnType<typeof checkOptions>): GaugeAnovaResult {
  const p = c.parts.length
  const a = c.appraisers.length
  const r = c.r
  const { ssP, ssA, ssAB, ssE, ssT } = sumsOfSquares(c)
  const dfP = p - 1
  const dfA = a - 1
  const dfAB = dfP * dfA
  const dfE = p * a * (r - 1)
  const dfT = p * a * r - 1
  const msP = ssP / dfP
  const msA = ssA / dfA
  const msAB = ssAB / dfAB
  const msE = ssE / dfE

  // Random-effects model (Montgomery): E[MS_P] = σ² + rσ²_PA + arσ²_P, E[MS_A] = σ² + rσ²_PA + prσ²_A,
  // E[MS_PA] = σ² + rσ²_PA, E[MS_E] = σ²; so parts and appraisers are tested against MS_PA and the
  // interaction against MS_E. (AIAG's printed table divides all three by MS_E.)
  const full: AnovaTable = {
    parts: row('parts', dfP, ssP, fTest(msP, msAB, dfP, dfAB), 'interaction'),
    appraisers: row('appraisers', dfA, ssA, fTest(msA, msAB, dfA, dfAB), 'interaction'),
    interaction: row('interaction', dfAB, ssAB, fTest(msAB, msE, dfAB, dfE), 'repeatability'),
    repeatability: row('repeatability', dfE, ssE, null, null),
    total: row('total', dfT, ssT, null, null),
  }
  const interactionP = full.interaction!.p
  // A p-value that does not exist (MS_PA = MS_E = 0) pools: both sums of squares are 0, so pooling changes nothing.
  const interactionPooled = o.pooling === 'always' || (o.pooling === 'auto' && (interactionP === null || interactionP > o.poolAlpha))

  const flags: GaugeFlag[] = []
  if (!(ssE > 0)) flags.push({ code: 'no_repeatability_error' })
  let pooled: AnovaTable | null = null
  let estimates: GaugeAnovaResult['estimates']
  if (interactionPooled) {
    const dfPool = dfAB + dfE
    const ssPool = ssAB + ssE
    const msPool = ssPool / dfPool
    pooled = {
      parts: row('parts', dfP, ssP, fTest(msP, msPool, dfP, dfPool), 'repeatability'),
      appraisers: row('appraisers', dfA, ssA, fTest(msA, msPool, dfA, dfPool), 'repeatability'),
      interaction: null,
      repeatability: row('repeatability', dfPool, ssPool, null, null),
      total: row('total', dfT, ssT, null, null),
    }
    // Reduced model: E[MS_P] = σ² + arσ²_P, E[MS_A] = σ² + prσ²_A, E[MS_pooled] = σ².
    estimates = { repeatability: msPool, appraiser: (msA - msPool) / (p * r), interaction: 0, part: (msP - msPool) / (a * r) }
    flags.push({ code: 'interaction_pooled', p: interactionP, alpha: o.pooling === 'auto' ? o.poolAlpha : null })
  } else {
    estimates = { repeatability: msE, appraiser: (msA - msAB) / (p * r), interaction: (msAB - msE) / r, part: (msP - msAB) / (a * r) }
  }
  for (const name of ['appraiser', 'interaction', 'part'] as const) {
    if (estimates[name] < 0) flags.push({ code: 'negative_variance_set_to_zero', component: name, estimate: estimates[name] })
  }
  const ev = estimates.repeatability
  const av = Math.max(0, estimates.appraiser)
  const int = Math.max(0, estimates.interaction)
  const pv = Math.max(0, estimates.part)
  const scale = { tolerance: o.tolerance, studyMultiplier: o.studyMultiplier }
  const f = figures({ ev, av, grr: ev + av + int, pv }, scale, flags)
  return {
    method: 'anova',
    ...f,
    interaction: component(int, { ...scale, tvVariance: f.tv.variance }),
    full,
    pooled,
    interactionPooled,
    estimates,
  }
}

// ---------------------------------------------------------------------------------------------
// Average-and-range method

function rangeRefusal(parts: number, appraisers: number, trials: number): string | null {
  const reasons: string[] = []
  if (!(trials in K1_BY_TRIALS)) reasons.push(`K1 is tabulated for 2 or 3 trials, not ${trials}`)
  if (!(appraisers in K2_BY_APPRAISERS)) reasons.push(`K2 for 2 or 3 appraisers, not ${appraisers}`)
  if (!(parts in K3_BY_PARTS)) reasons.push(`K3 for 2 to 10 parts, not ${parts}`)
  return reasons.length === 0 ? null : `The average-and-range method needs the AIAG constants: ${reasons.join('; ')}`
}

function rangeMethod(c: Cube, o: ReturnType<typeof checkOptions>): GaugeRangeResult {
  const p = c.parts.length
  const a = c.appraisers.length
  const r = c.r
  const k1 = K1_BY_TRIALS[r]!
  const k2 = K2_BY_APPRAISERS[a]!
  const k3 = K3_BY_PARTS[p]!
  const rangeOf = (xs: readonly number[]) => Math.max(...xs) - Math.min(...xs)
  const appraiserAverages: Record<string, number> = {}
  const appraiserAverageRanges: Record<string, number> = {}
  c.appraisers.forEach((name, j) => {
    appraiserAverages[name] = mean(c.values.flatMap((row) => row[j]!))
    appraiserAverageRanges[name] = mean(c.values.map((row) => rangeOf(row[j]!)))
  })
  const partAverages: Record<string, number> = {}
  c.parts.forEach((name, i) => {
    partAverages[name] = mean(c.values[i]!.flat())
  })
  const rBarBar = mean(Object.values(appraiserAverageRanges))
  const xDiff = rangeOf(Object.values(appraiserAverages))
  const rp = rangeOf(Object.values(partAverages))

  const flags: GaugeFlag[] = []
  const ev = rBarBar * k1
  // AV² = (X̄diff·K2)² − EV²/(n·r): the appraiser averages carry part of the repeatability, taken out here.
  const avSquared = (xDiff * k2) ** 2 - (ev * ev) / (p * r)
  if (avSquared < 0) flags.push({ code: 'negative_av_set_to_zero', estimate: avSquared })
  if (!(rBarBar > 0)) flags.push({ code: 'no_repeatability_error' })
  const av2 = Math.max(0, avSquared)
  const pv = rp * k3
  const f = figures({ ev: ev * ev, av: av2, grr: ev * ev + av2, pv: pv * pv }, { tolerance: o.tolerance, studyMultiplier: o.studyMultiplier }, flags)
  return { method: 'range', ...f, k1, k2, k3, rBarBar, xDiff, rp, appraiserAverages, appraiserAverageRanges, partAverages }
}

// ---------------------------------------------------------------------------------------------
// The study

/**
 * A crossed gauge R&R study by the ANOVA method and, where the AIAG constants are tabulated, by the
 * average-and-range method. Refuses rather than computes on an incomplete design.
 * @throws StatsError `non_finite_value` for a reading or trial number that is not finite;
 *   `too_few_points` for fewer than 2 parts, 2 appraisers or 2 trials per cell;
 *   `unbalanced_study` when a part × appraiser cell is missing, holds another number of readings
 *   than the others, or repeats a trial number (the cells are named in the message and listed in
 *   `details`); `invalid_option` for a tolerance or multiplier not above 0, a pooling level outside
 *   (0, 1) or an unknown pooling mode.
 */
export function gaugeStudy(measurements: readonly GaugeMeasurement[], options: GaugeStudyOptions = {}): GaugeStudy {
  const o = checkOptions(options)
  const design = checkGaugeDesign(measurements)
  if (design.parts.length < 2) throw new StatsError('too_few_points', `A gauge study needs at least 2 parts (got ${design.parts.length})`)
  if (design.appraisers.length < 2) throw new StatsError('too_few_points', `A gauge study needs at least 2 appraisers (got ${design.appraisers.length})`)
  if (!design.balanced) throw unbalancedError(design)
  const r = design.trialsPerCell!
  if (r < 2) throw new StatsError('too_few_points', `A gauge study needs at least 2 trials per part and appraiser (got ${r})`)

  const cells = groupCells(measurements)
  const cube: Cube = {
    parts: design.parts,
    appraisers: design.appraisers,
    r,
    values: design.parts.map((part) => design.appraisers.map((appraiser) => cells.get(part)!.get(appraiser)!.map((m) => m.value))),
  }
  const refusal = rangeRefusal(design.parts.length, design.appraisers.length, r)
  return {
    design,
    n: measurements.length,
    tolerance: o.tolerance,
    studyMultiplier: o.studyMultiplier,
    poolAlpha: o.poolAlpha,
    pooling: o.pooling,
    anova: anovaMethod(cube, o),
    range: refusal === null ? rangeMethod(cube, o) : null,
    rangeRefusal: refusal,
  }
}
