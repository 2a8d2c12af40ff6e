/**
 * Drift: the individuals / moving-range (I-MR) control chart over production order, with the
 * Western Electric run rules: the drift view, which catches a process moving before units fail.
 *
 * Sources (section numbers from memory; the constants are the standard tabulated ones and follow
 * from the normal distribution: d2 = 2/√π = 1.1284, D4 = 1 + 3·d3/d2 = 3.2665 with d3 = 0.8525):
 * - NIST/SEMATECH e-Handbook of Statistical Methods, 6.3.2.2 "Individuals Control Charts":
 *   moving range MRᵢ = |xᵢ − xᵢ₋₁|, centre line x̄, limits x̄ ± 3·MR̄/1.128, MR chart UCL 3.267·MR̄;
 * - Montgomery, Introduction to Statistical Quality Control, the individuals chart and the table of
 *   control-chart constants (n = 2: d2 = 1.128, D3 = 0, D4 = 3.267);
 * - Western Electric Co., Statistical Quality Control Handbook (1956), the zone tests; also listed
 *   in the e-Handbook 6.3.2 ("What are Variables Control Charts?", the WECO rules).
 *
 * Pure: the caller passes one figure's values (e.g. Fs) in production order, one per unit, with
 * units that lack the figure left out. Indices in the answers are positions in that array.
 */
import { summarize } from './summary.ts'
import { StatsError } from './errors.ts'

/** d2 for ranges of n = 2 consecutive points: E[range] of two standard normal values = 2/√π. */
export const D2_N2 = 1.128
/** D4 for n = 2: MR chart UCL = D4·MR̄ (= 1 + 3·d3/d2 with d3 = 0.853). */
export const D4_N2 = 3.267
/** D3 for n = 2: the MR chart's lower limit is 0. */
export const D3_N2 = 0
/** Shewhart's three-sigma limits. */
export const SIGMA_MULTIPLIER = 3
/** Points a baseline stretch should hold for trial limits: 20–25 is the usual advice (common practice, Montgomery). */
export const DEFAULT_BASELINE_LENGTH = 20

export interface ImrLimits {
  /** Points the limits were computed from. */
  n: number
  /** Centre line of the individuals chart: the baseline mean x̄. */
  centre: number
  /** σ estimated as MR̄/d2. */
  sigma: number
  ucl: number
  lcl: number
  /** Mean moving range of the baseline: the MR chart's centre line. */
  mrBar: number
  mrUcl: number
  mrLcl: number
}

function checkFinite(values: readonly number[], what: string): void {
  const bad = values.findIndex((v) => typeof v !== 'number' || !Number.isFinite(v))
  if (bad >= 0) throw new StatsError('non_finite_value', `${what}: value ${bad} is not a finite number; leave units without the figure out`)
}

/** Moving ranges of span 2: |xᵢ − xᵢ₋₁| for i ≥ 1 (one fewer than the values). */
export function movingRanges(values: readonly number[]): number[] {
  const out: number[] = []
  for (let i = 1; i < values.length; i++) out.push(Math.abs(values[i]! - values[i - 1]!))
  return out
}

/**
 * I-MR control limits from a baseline: x̄ ± 3·MR̄/d2, and D4·MR̄ for the moving ranges.
 * The baseline is either the first in-control stretch (see findBaseline) or given, e.g. the golden
 * units' values.
 * @throws StatsError `too_few_points` below 2 values, `non_finite_value` for NaN or ±Infinity.
 */
export function imrLimits(baseline: readonly number[]): ImrLimits {
  checkFinite(baseline, 'baseline')
  if (baseline.length < 2) throw new StatsError('too_few_points', `I-MR limits need at least 2 baseline values; ${baseline.length} given`)
  const centre = summarize(baseline)!.mean
  const mrs = movingRanges(baseline)
  const mrBar = mrs.reduce((s, v) => s + v, 0) / mrs.length
  const sigma = mrBar / D2_N2
  return {
    n: baseline.length,
    centre,
    sigma,
    ucl: centre + SIGMA_MULTIPLIER * sigma,
    lcl: centre - SIGMA_MULTIPLIER * sigma,
    mrBar,
    mrUcl: D4_N2 * mrBar,
    mrLcl: D3_N2 * mrBar,
  }
}

// ---------------------------------------------------------------------------------------------
// Western Electric rules

export const RUN_RULES = ['beyond-3-sigma', 'two-of-three-beyond-2-sigma', 'four-of-five-beyond-1-sigma', 'eight-on-one-side'] as const
export type RunRule = (typeof RUN_RULES)[number]
/** A moving range above D4·MR̄: a jump between consecutive units (the MR chart's own test). */
export type ChartRule = RunRule | 'moving-range-beyond-limit'

/** Each zone test: `count` of the last `window` points beyond `sigmas`·σ on one side of the centre line. */
const RULE_SPECS: Readonly<Record<RunRule, { count: number; window: number; sigmas: number }>> = {
  'beyond-3-sigma': { count: 1, window: 1, sigmas: 3 },
  'two-of-three-beyond-2-sigma': { count: 2, window: 3, sigmas: 2 },
  'four-of-five-beyond-1-sigma': { count: 4, window: 5, sigmas: 1 },
  'eight-on-one-side': { count: 8, window: 8, sigmas: 0 },
}

export type Side = 'above' | 'below'

export interface RuleSignal {
  rule: ChartRule
  /** The point that completed the pattern (it is itself one of the points beyond the zone). */
  index: number
  side: Side
  /**
   * The points beyond the zone that make up the pattern, ascending: for rule 4 the whole run so far,
   * for the MR rule the two units of the jump.
   */
  points: number[]
}

export interface RuleOptions {
  /** Rules to test (default all four). */
  rules?: readonly RunRule[]
}

/**
 * The Western Electric zone tests on an individuals series against a centre line and σ:
 * 1. one point beyond 3σ; 2. two of three consecutive points beyond 2σ on the same side;
 * 3. four of five consecutive points beyond 1σ on the same side; 4. eight consecutive points on
 * one side of the centre line.
 *
 * Conventions (common practice, stated so the tests can hold them):
 * - "beyond" is strict: a point exactly on a zone boundary (or on a control limit) is not beyond;
 *   a point exactly on the centre line is on neither side and breaks a run of rule 4;
 * - a signal is reported at each point that completes a pattern and is itself beyond the zone, so
 *   a run of 10 on one side signals at its 8th, 9th and 10th points (alerting once per episode is
 *   the caller's job);
 * - at the start of a series a window is the points so far: two of the first two beyond 2σ fire
 *   rule 2, as they would whatever the third point is.
 */
export function westernElectric(values: readonly number[], centre: { centre: number; sigma: number }, opts: RuleOptions = {}): RuleSignal[] {
  checkFinite(values, 'series')
  const rules = opts.rules ?? RUN_RULES
  const { centre: c, sigma } = centre
  if (!(Number.isFinite(c) && Number.isFinite(sigma) && sigma >= 0)) throw new StatsError('invalid_option', 'the centre line and σ must be finite, σ ≥ 0')
  const signals: RuleSignal[] = []
  for (let i = 0; i < values.length; i++) {
    for (const rule of rules) {
      const { count, window, sigmas } = RULE_SPECS[rule]
      for (const side of ['above', 'below'] as const) {
        const beyond = (x: number) => (side === 'above' ? x - c > sigmas * sigma : c - x > sigmas * sigma)
        if (!beyond(values[i]!)) continue
        const from = Math.max(0, i - window + 1)
        const points: number[] = []
        for (let j = from; j <= i; j++) if (beyond(values[j]!)) points.push(j)
        // Rule 4 needs all eight; a partial window at the start cannot hold eight points.
        if (points.length < count) continue
        if (rule === 'eight-on-one-side') {
          // Report the whole run so far, so a warning can say how long it has lasted.
          for (let j = from - 1; j >= 0 && beyond(values[j]!); j--) points.unshift(j)
        }
        signals.push({ rule, index: i, side, points })
      }
    }
  }
  return signals
}

/** Moving ranges above the MR chart's UCL: index is the later unit of the jump. */
export function movingRangeSignals(values: readonly number[], limits: Pick<ImrLimits, 'mrUcl'>): RuleSignal[] {
  checkFinite(values, 'series')
  const out: RuleSignal[] = []
  for (let i = 1; i < values.length; i++) {
    if (Math.abs(values[i]! - values[i - 1]!) > limits.mrUcl) {
      out.push({ rule: 'moving-range-beyond-limit', index: i, side: values[i]! > values[i - 1]! ? 'above' : 'below', points: [i - 1, i] })
    }
  }
  return out
}

/**
 * The first stretch of `length` consecutive points that is in control against its own limits: no
 * Western Electric rule fires and no moving range exceeds D4·MR̄. Null when there is none (or the
 * series is shorter than `length`).
 */
export function findBaseline(values: readonly number[], length = DEFAULT_BASELINE_LENGTH): { start: number; end: number; limits: ImrLimits } | null {
  checkFinite(values, 'series')
  if (!(Number.isInteger(length) && length >= 2)) throw new StatsError('invalid_option', 'the baseline length must be an integer ≥ 2')
  for (let start = 0; start + length <= values.length; start++) {
    const stretch = values.slice(start, start + length)
    const limits = imrLimits(stretch)
    if (limits.sigma === 0) continue
    if (westernElectric(stretch, limits).length === 0 && movingRangeSignals(stretch, limits).length === 0) {
      return { start, end: start + length, limits }
    }
  }
  return null
}

export interface ImrPoint {
  index: number
  value: number
  /** |xᵢ − xᵢ₋₁|; null for the first point. */
  movingRange: number | null
}

export interface ImrChart {
  limits: ImrLimits
  /** Where the limits came from: a given baseline (e.g. golden units) or a stretch of this series [start, end). */
  baseline: { source: 'given' } | { source: 'stretch'; start: number; end: number }
  points: ImrPoint[]
  /** Run-rule and moving-range signals, by index, then in the order of RUN_RULES. */
  signals: RuleSignal[]
}

export interface ImrChartOptions extends RuleOptions {
  /** Values the limits come from (e.g. the golden units'); default: the first in-control stretch. */
  baseline?: readonly number[]
  /** Length of the stretch findBaseline looks for (default 20). */
  baselineLength?: number
  /** Test the moving ranges against D4·MR̄ too (default true). */
  movingRange?: boolean
}

/**
 * The individuals / moving-range chart of a series with its signals. Without a given baseline the
 * limits come from the first in-control stretch; null when the series has none.
 * @throws StatsError for non-finite values, a given baseline under 2 values or a bad baseline length.
 */
export function imrChart(values: readonly number[], opts: ImrChartOptions = {}): ImrChart | null {
  checkFinite(values, 'series')
  let limits: ImrLimits
  let baseline: ImrChart['baseline']
  if (opts.baseline) {
    limits = imrLimits(opts.baseline)
    baseline = { source: 'given' }
  } else {
    const found = findBaseline(values, opts.baselineLength ?? DEFAULT_BASELINE_LENGTH)
    if (!found) return null
    limits = found.limits
    baseline = { source: 'stretch', start: found.start, end: found.end }
  }
  const points = values.map((value, index): ImrPoint => ({ index, value, movingRange: index === 0 ? null : Math.abs(value - values[index - 1]!) }))
  const order = (r: ChartRule) => (r === 'moving-range-beyond-limit' ? RUN_RULES.length : RUN_RULES.indexOf(r))
  const signals = [...westernElectric(values, limits, opts), ...(opts.movingRange === false ? [] : movingRangeSignals(values, limits))].sort(
    (a, b) => a.index - b.index || order(a.rule) - order(b.rule),
  )
  return { limits, baseline, points, signals }
}

// ---------------------------------------------------------------------------------------------
// Plain-language warnings

export interface FigureLabel {
  /** As the bench shows it, e.g. "Fs" (CHECK_LABELS in shared/utils/mask.ts). */
  label: string
  /** e.g. "Hz"; empty for unitless figures. */
  unit?: string
}

/**
 * A warning a quality engineer can act on, for one signal. The "likely meaning" of each rule is
 * the usual reading of the zone tests (Western Electric handbook; common practice), not a diagnosis.
 * `serials` maps indices to serial numbers when the caller has them.
 */
export function describeSignal(signal: RuleSignal, figure: FigureLabel, serials?: readonly string[]): string {
  const { label } = figure
  const dir = signal.side === 'above' ? 'above' : 'below'
  const up = signal.side === 'above' ? 'upward' : 'downward'
  const unitName = (i: number) => (serials?.[i] ? `unit ${serials[i]}` : `unit #${i + 1} in production order`)
  switch (signal.rule) {
    case 'beyond-3-sigma':
      return `${label} of ${unitName(signal.index)} is ${dir} the ${dir === 'above' ? 'upper' : 'lower'} control limit (beyond 3σ): something out of the ordinary happened to this unit or the station; check it.`
    case 'two-of-three-beyond-2-sigma':
      return `${label}: 2 of the last 3 units are beyond 2σ ${dir} the centre line: the process is likely moving ${up}.`
    case 'four-of-five-beyond-1-sigma':
      return `${label}: 4 of the last 5 units are beyond 1σ ${dir} the centre line: the process has likely shifted ${up}.`
    case 'eight-on-one-side':
      return `${label} has run ${dir} its centre line for ${signal.points.length} units in a row: the process has shifted.`
    case 'moving-range-beyond-limit': {
      const [a, b] = signal.points as [number, number]
      return `${label} jumped between ${unitName(a)} and ${unitName(b)} by more than the moving-range limit: a sudden change (a new batch of parts, a setting, the station).`
    }
  }
}
