/**
 * Proposed mask limits from golden units: the statistical starting point of a new mask, before the
 * engineer edits, previews and releases it. An engineer under time pressure releases what is
 * proposed, so the proposal accounts for how few units it saw.
 *
 * Pure: no database, no HTTP. Each limit is the golden mean ± max(k·s, floor):
 * - k is a normal tolerance factor for the n golden units (NIST/SEMATECH e-Handbook 7.2.6.3):
 *   two-sided k2 for a limit on both sides, one-sided k1 for THD and rub and buzz (upper only). The
 *   mask's coverage p is the share of good units the whole mask should pass, so each of its m limits
 *   gets coverage 1 − (1 − p)/m (Bonferroni: the shares each limit leaves out add up to at most
 *   1 − p), all at confidence γ. A curve counts as one limit, every point with that coverage.
 * - s is the sample standard deviation (n − 1 in the denominator, Bessel's correction).
 * - The floor keeps a limit from being narrower than a data sheet's tolerance when the golden units
 *   happen to agree closely (per product, shared/utils/mask.ts DEFAULT_FLOORS, common practice).
 * - An engineer may ask for a fixed k instead (every limit then says "k·s").
 *
 * The proposal records for every limit which rule set it, the n and the k; the engineer edits
 * every figure afterwards.
 */
import { summarize, type Summary } from '../stats/summary.ts'
import { oneSidedToleranceFactor, robustSd, twoSidedToleranceFactor } from '../stats/tolerance.ts'
import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import { DEFAULT_SWEEP, OCTAVE_RATIO_BASE10, valueAtHz } from '../analysis/index.ts'
import type { AnalysisCurves, AnalysisFlags, AnalysisParameters } from '../analysis/index.ts'
import {
  DEFAULT_CONFIDENCE,
  DEFAULT_COVERAGE,
  DEFAULT_DECISION_RULE,
  CHECK_LABELS,
  DEFAULT_FLOORS,
  GOLDEN_SPREAD_HISTORY_MIN,
  GOLDEN_SPREAD_WARN_RATIO,
  SCALAR_LIMIT_NAMES,
  UPPER_ONLY,
  figureValue,
  floorOf,
  type DecisionRule,
  type FloorName,
  type LimitFloors,
  type MaskLimits,
  type ScalarLimitName,
} from '../../shared/utils/mask.ts'
import type { CurveBasis, LimitBasis, MaskProposal, ProposalWarning } from '../../shared/types/api.ts'

/** Fewer golden units than this gives a standard deviation too uncertain to build limits on. */
export const MIN_GOLDEN_UNITS = 5
/** Below this many golden units the proposal warns: the tolerance factors grow fast and σ is rough. */
export const FEW_GOLDEN_UNITS = 8

/** What proposeLimits reads from one golden unit's result (an AnalysisResult fits, as does a stored result). */
export interface GoldenResult {
  parameters: Partial<Pick<AnalysisParameters, 'reOhm' | ScalarLimitName>>
  curves: Pick<AnalysisCurves, 'freqHz'> & Partial<Pick<AnalysisCurves, 'splDb' | 'impedanceOhm' | 'thdPct'>>
  flags?: Partial<Pick<AnalysisFlags, 'polarity'>>
}

/** Extra margin added in a band the engineer marks (e.g. around cone break-up). */
export interface MarginRegion {
  fromHz: number
  toHz: number
  /** Added above the proposed upper limit, in the curve's unit. */
  upper?: number
  /** Added below the proposed lower limit, in the curve's unit. */
  lower?: number
}

/** One side of a curve band: its own k and floor when they differ from the common ones. */
export interface BandSide {
  k?: number
  floor?: number
}

export interface CurveProposalOptions {
  fromHz?: number
  toHz?: number
  upper?: BandSide
  lower?: BandSide
  regions?: MarginRegion[]
}

export interface ProposeOptions {
  /** A fixed multiplier of σ instead of the tolerance factor. */
  k?: number
  /** Share of good units the whole mask should pass (default 0.99). */
  coverage?: number
  /** Confidence of each tolerance interval (default 0.95). */
  confidence?: number
  /** The product's floors (absent names: the defaults). */
  floors?: LimitFloors
  /** Floor of the response band, dB, overriding the product's. */
  floorDb?: number
  /** Response band range; default the sweep band less its last one-third octave. */
  fromHz?: number
  toHz?: number
  /** The sweep the golden units were measured with: only its band is read (default 20 Hz–20 kHz). */
  sweepBandHz?: [number, number]
  /** Per-side overrides and extra-margin regions of the response band. */
  response?: Omit<CurveProposalOptions, 'fromHz' | 'toHz'> | false
  /** Propose an impedance-curve band too (off by default); side floors are fractions of the mean |Z|. */
  impedance?: CurveProposalOptions | boolean
  /** Band for the THD maximum (default: the whole measured band). */
  thdBandHz?: [number, number]
  /** Figures left without a limit. */
  omit?: readonly ScalarLimitName[]
  decisionRule?: DecisionRule
}

export const PROPOSE_ERROR_CODES = ['too_few_golden_units', 'invalid_proposal_options'] as const satisfies readonly ErrorCode[]
export type ProposeErrorCode = (typeof PROPOSE_ERROR_CODES)[number]

/** A proposal that cannot be made. */
export class ProposeError extends DomainError<ProposeErrorCode> {}

/** Half-width of a limit: max(k·σ, floor). */
export function halfWidth(sd: number, k: number, floor: number): number {
  return Math.max(k * sd, floor)
}

/** The default response range: the sweep band less its last one-third octave (base-10 ratio, IEC 61260-1). */
export function defaultCurveRange(sweepBandHz: [number, number]): [number, number] {
  return [sweepBandHz[0], sweepBandHz[1] / Math.pow(OCTAVE_RATIO_BASE10, 1 / 3)]
}

function round(x: number, digits = 5): number {
  return Number(x.toPrecision(digits))
}

function checkPositive(name: string, v: number | undefined) {
  if (v !== undefined && !(Number.isFinite(v) && v >= 0)) throw new ProposeError('invalid_proposal_options', `${name} must be a finite number ≥ 0`)
}

function checkShare(name: string, v: number) {
  if (!(v > 0 && v < 1)) throw new ProposeError('invalid_proposal_options', `${name} must lie between 0 and 1 (got ${v})`)
}

/** A floor as a half-width in the figure's own unit: '%' floors are shares of the golden mean. */
export function floorHalfWidth(name: FloorName, floor: number, mean: number): number {
  return DEFAULT_FLOORS[name].unit === '%' ? (floor / 100) * Math.abs(mean) : floor
}

/** A curve's value at grid point i (frequency f): exact when the grids agree there, else interpolated. */
function pointValue(freqHz: readonly number[], values: readonly (number | null)[], i: number, f: number): number | null {
  const fi = freqHz[i]
  if (fi !== undefined && Math.abs(fi - f) <= 1e-9 * f) return values[i] ?? null
  return valueAtHz(freqHz, values, f)
}

/**
 * The multiplier of s for n golden units: the fixed k when asked for, else the tolerance factor at
 * the per-limit coverage (two-sided, or one-sided for an upper limit only). Cached per n.
 */
class Factors {
  private cache = new Map<string, number>()
  constructor(
    readonly fixedK: number | null,
    readonly coverage: number,
    readonly confidence: number,
  ) {}

  k(n: number, oneSided = false): number {
    if (this.fixedK !== null) return this.fixedK
    const key = `${n}:${oneSided}`
    let k = this.cache.get(key)
    if (k === undefined) {
      k = oneSided ? oneSidedToleranceFactor(n, this.coverage, this.confidence) : twoSidedToleranceFactor(n, this.coverage, this.confidence)
      this.cache.set(key, k)
    }
    return k
  }

  rule(k: number, sd: number, floor: number): LimitBasis['rule'] {
    if (k * sd >= floor) return this.fixedK !== null ? 'k_sigma' : 'interval'
    return 'floor'
  }
}

interface SideSpec {
  /** A k of this side's own (overrides the factor). */
  k?: number
  floor: (mean: number) => number
}

interface CurveBandSpec {
  fromHz: number
  toHz: number
  upper: SideSpec
  lower: SideSpec
  regions: MarginRegion[]
}

type CurveLimit = NonNullable<MaskLimits['curves']['splDb']>

/**
 * Half-width, in octaves, of the window a curve point's standard deviation is pooled over. A
 * response is smooth on this scale, and a standard deviation from a dozen curves at one point is
 * rough (11 degrees of freedom): pooling the variances of the neighbouring points steadies it, so
 * few points get a band narrower than their true spread calls for. The mean stays per point.
 */
export const CURVE_SD_POOL_OCTAVES = 1 / 6

/** √(mean variance) of the points within ±CURVE_SD_POOL_OCTAVES of point j. */
function pooledSd(points: readonly { f: number; s: Summary | null }[], j: number, f: number): number {
  const ratio = Math.pow(2, CURVE_SD_POOL_OCTAVES)
  let sum = 0
  let count = 0
  for (let i = j; i >= 0 && points[i]!.f >= f / ratio; i--) if (points[i]!.s) [sum, count] = [sum + points[i]!.s!.sd ** 2, count + 1]
  for (let i = j + 1; i < points.length && points[i]!.f <= f * ratio; i++) if (points[i]!.s) [sum, count] = [sum + points[i]!.s!.sd ** 2, count + 1]
  return Math.sqrt(sum / count)
}

/**
 * The band mean ± max(k·s, floor) at each point of the golden units' standard grid within
 * [fromHz, toHz], k for the number of curves with a value there and s pooled over the neighbouring
 * points (CURVE_SD_POOL_OCTAVES). A point where fewer than
 * MIN_GOLDEN_UNITS curves have a value stays open (null), which judge() skips. Returns undefined
 * when no golden unit has this curve.
 */
export function proposeCurveBand(
  golden: readonly GoldenResult[],
  curve: 'splDb' | 'impedanceOhm',
  spec: CurveBandSpec,
  factors: Factors,
): { limit: CurveLimit; basis: CurveBasis } | undefined {
  const withCurve = golden.filter((g) => g.curves[curve])
  if (withCurve.length === 0) return undefined
  // Every result shares the standard grid from 10 Hz; the longest one covers the others.
  const grid = withCurve.reduce((a, g) => (g.curves.freqHz.length > a.length ? g.curves.freqHz : a), [] as readonly number[])
  const tol = 1e-9
  const freqHz: number[] = []
  const low: (number | null)[] = []
  const high: (number | null)[] = []
  let minN = Number.POSITIVE_INFINITY
  let byFloor = 0
  let byInterval = 0
  const points: { f: number; s: Summary | null }[] = []
  grid.forEach((f, i) => {
    if (f < spec.fromHz * (1 - tol) || f > spec.toHz * (1 + tol)) return
    const s = summarize(withCurve.map((g) => pointValue(g.curves.freqHz, g.curves[curve]!, i, f)))
    points.push({ f, s: s && s.n >= MIN_GOLDEN_UNITS ? s : null })
  })
  points.forEach(({ f, s }, j) => {
    freqHz.push(round(f, 6))
    if (!s) {
      low.push(null)
      high.push(null)
      return
    }
    minN = Math.min(minN, s.n)
    const sd = pooledSd(points, j, f)
    const kAll = factors.k(s.n)
    const side = (sp: SideSpec) => {
      const k = sp.k ?? kAll
      const floor = sp.floor(s.mean)
      if (k * sd >= floor) byInterval++
      else byFloor++
      return halfWidth(sd, k, floor)
    }
    let up = side(spec.upper)
    let down = side(spec.lower)
    for (const r of spec.regions) {
      if (f >= r.fromHz && f <= r.toHz) {
        up += r.upper ?? 0
        down += r.lower ?? 0
      }
    }
    high.push(round(s.mean + up))
    low.push(round(s.mean - down))
  })
  if (freqHz.length < 2 || !Number.isFinite(minN)) return undefined
  const rule: CurveBasis['rule'] = byFloor === 0 ? (factors.fixedK !== null ? 'k_sigma' : 'interval') : byInterval === 0 ? 'floor' : 'mixed'
  return {
    limit: { freqHz, low, high },
    basis: { rule, n: minN, k: round(factors.k(minN), 4), coverage: factors.coverage, sides: byFloor + byInterval, sidesByFloor: byFloor },
  }
}

/** What the figures' golden summaries are; a figure fewer than MIN_GOLDEN_UNITS measured is left out. */
function scalarSummaries(golden: readonly GoldenResult[], opts: ProposeOptions): Map<ScalarLimitName, Summary> {
  const out = new Map<ScalarLimitName, Summary>()
  for (const name of SCALAR_LIMIT_NAMES) {
    if (opts.omit?.includes(name)) continue
    const s = summarize(golden.map((g) => figureValue(g, name, opts.thdBandHz)))
    if (s && s.n >= MIN_GOLDEN_UNITS) out.set(name, s)
  }
  return out
}

/**
 * Proposes a mask from golden units, with how each limit was set: scalar limits for the figures at
 * least MIN_GOLDEN_UNITS golden units measured (THD max and rub and buzz as upper limits only);
 * polarity must be normal; the rated-impedance rule of IEC 60268-5 on; a response band (and, when
 * asked, an impedance band) on the standard grid.
 * @throws ProposeError `too_few_golden_units` below MIN_GOLDEN_UNITS, `invalid_proposal_options` for a bad k, floor, share or range.
 */
export function proposeMask(golden: readonly GoldenResult[], opts: ProposeOptions = {}): { limits: MaskLimits; proposal: MaskProposal } {
  if (golden.length < MIN_GOLDEN_UNITS) {
    throw new ProposeError('too_few_golden_units', `A mask needs at least ${MIN_GOLDEN_UNITS} golden units; ${golden.length} given`)
  }
  const coverage = opts.coverage ?? DEFAULT_COVERAGE
  const confidence = opts.confidence ?? DEFAULT_CONFIDENCE
  checkShare('coverage', coverage)
  checkShare('confidence', confidence)
  checkPositive('k', opts.k)
  checkPositive('floorDb', opts.floorDb)
  for (const [name, v] of Object.entries(opts.floors ?? {})) checkPositive(`floors.${name}`, v)

  const sweepBand = opts.sweepBandHz ?? [DEFAULT_SWEEP.f1Hz, DEFAULT_SWEEP.f2Hz]
  const [defFrom, defTo] = defaultCurveRange(sweepBand)
  const floors = opts.floors
  const responseSpec =
    opts.response === false
      ? null
      : bandSpec(opts.fromHz ?? defFrom, opts.toHz ?? defTo, opts.response ?? {}, () => opts.floorDb ?? floorOf(floors, 'splDb'), (v) => () => v)
  const z = opts.impedance ? (opts.impedance === true ? {} : opts.impedance) : null
  const fraction = floorOf(floors, 'impedanceOhm') / 100
  // Side floors, when given, are fractions of the mean too.
  const impedanceSpec = z ? bandSpec(z.fromHz ?? defFrom, z.toHz ?? defTo, z, (m) => fraction * m, (v) => (m) => v * m) : null

  // The limits the mask will hold, to share the coverage among them.
  const summaries = scalarSummaries(golden, opts)
  const hasCurve = (c: 'splDb' | 'impedanceOhm') => golden.filter((g) => g.curves[c]).length >= MIN_GOLDEN_UNITS
  const curveCount = (responseSpec && hasCurve('splDb') ? 1 : 0) + (impedanceSpec && hasCurve('impedanceOhm') ? 1 : 0)
  const limitCount = Math.max(1, summaries.size + curveCount)
  const perLimit = 1 - (1 - coverage) / limitCount
  const factors = new Factors(opts.k ?? null, perLimit, confidence)

  const scalars: MaskLimits['scalars'] = {}
  const scalarBasis: MaskProposal['scalars'] = {}
  for (const [name, s] of summaries) {
    const upperOnly = UPPER_ONLY.has(name)
    const k = factors.k(s.n, upperOnly)
    const floor = floorHalfWidth(name, floorOf(floors, name), s.mean)
    const w = halfWidth(s.sd, k, floor)
    scalars[name] = upperOnly ? { low: null, high: round(s.mean + w) } : { low: round(s.mean - w), high: round(s.mean + w) }
    scalarBasis[name] = { rule: factors.rule(k, s.sd, floor), n: s.n, k: round(k, 4), mean: round(s.mean, 6), sd: round(s.sd, 4), floor: round(floor, 4), coverage: perLimit, oneSided: upperOnly }
  }

  const curves: MaskLimits['curves'] = {}
  const curveBasis: MaskProposal['curves'] = {}
  for (const [name, spec] of [['splDb', responseSpec], ['impedanceOhm', impedanceSpec]] as const) {
    const band = spec && proposeCurveBand(golden, name, spec, factors)
    if (!band) continue
    curves[name] = band.limit
    curveBasis[name] = band.basis
  }

  const warnings: ProposalWarning[] = []
  if (golden.length < FEW_GOLDEN_UNITS) {
    warnings.push({
      code: 'few_golden_units',
      text: `Only ${golden.length} golden units: with fewer than ${FEW_GOLDEN_UNITS} their spread is a rough guide to production's${opts.k === undefined ? ' and the tolerance factors are large' : ''}. Add golden units if you can.`,
    })
  }
  const limits: MaskLimits = {
    scalars,
    polarityNormal: true,
    ratedImpedanceRule: true,
    curves,
    thdBandHz: opts.thdBandHz ?? null,
    decisionRule: opts.decisionRule ?? DEFAULT_DECISION_RULE,
  }
  return {
    limits,
    proposal: { coverage, confidence, fixedK: opts.k ?? null, limitCount, coveragePerLimit: perLimit, goldenUnits: golden.length, scalars: scalarBasis, curves: curveBasis, warnings, spread: {}, proposedLimits: limits },
  }
}

/** The limits alone (see proposeMask). */
export function proposeLimits(golden: readonly GoldenResult[], opts: ProposeOptions = {}): MaskLimits {
  return proposeMask(golden, opts).limits
}

function bandSpec(
  fromHz: number,
  toHz: number,
  o: Omit<CurveProposalOptions, 'fromHz' | 'toHz'>,
  floor: (mean: number) => number,
  sideFloor: (v: number) => (mean: number) => number,
): CurveBandSpec {
  if (!(fromHz > 0 && toHz > fromHz)) throw new ProposeError('invalid_proposal_options', `The curve range must satisfy 0 < fromHz < toHz (got ${fromHz}–${toHz} Hz)`)
  for (const [side, s] of [['upper', o.upper], ['lower', o.lower]] as const) {
    checkPositive(`${side}.k`, s?.k)
    checkPositive(`${side}.floor`, s?.floor)
  }
  for (const r of o.regions ?? []) {
    if (!(r.fromHz > 0 && r.toHz >= r.fromHz)) throw new ProposeError('invalid_proposal_options', `A margin region needs 0 < fromHz ≤ toHz (got ${r.fromHz}–${r.toHz} Hz)`)
    checkPositive('region upper margin', r.upper)
    checkPositive('region lower margin', r.lower)
  }
  return {
    fromHz,
    toHz,
    upper: { k: o.upper?.k, floor: o.upper?.floor !== undefined ? sideFloor(o.upper.floor) : floor },
    lower: { k: o.lower?.k, floor: o.lower?.floor !== undefined ? sideFloor(o.lower.floor) : floor },
    regions: o.regions ?? [],
  }
}

/**
 * The golden units' spread against the product's production (each unit's latest result, golden
 * units left out), per figure: the golden sample standard deviation over production's robust σ
 * (1.4826 × MAD, so a few defective units do not widen it). A ratio below GOLDEN_SPREAD_WARN_RATIO
 * with at least GOLDEN_SPREAD_HISTORY_MIN production units draws a warning: limits from units more alike
 * than the line reject good units (the floors soften this; the warning says so).
 */
export function compareSpreads(
  golden: readonly GoldenResult[],
  history: readonly GoldenResult[],
  thdBandHz?: readonly [number, number] | null,
): { spread: MaskProposal['spread']; warnings: ProposalWarning[] } {
  const spread: MaskProposal['spread'] = {}
  const warnings: ProposalWarning[] = []
  for (const name of SCALAR_LIMIT_NAMES) {
    const g = summarize(golden.map((r) => figureValue(r, name, thdBandHz)))
    const values = history.map((r) => figureValue(r, name, thdBandHz)).filter((v): v is number => v !== null && Number.isFinite(v))
    const historySd = robustSd(values)
    if (!g || g.n < MIN_GOLDEN_UNITS || historySd === null || !(historySd > 0)) continue
    const ratio = g.sd / historySd
    spread[name] = { goldenSd: round(g.sd, 4), goldenN: g.n, historySd: round(historySd, 4), historyN: values.length, ratio: round(ratio, 3) }
    if (values.length >= GOLDEN_SPREAD_HISTORY_MIN && ratio < GOLDEN_SPREAD_WARN_RATIO) {
      warnings.push({
        code: 'golden_more_alike',
        figure: name,
        text: `${CHECK_LABELS[name]!.label}: these golden units are more alike than your production (σ ${fmt(g.sd)} against ${fmt(historySd)} over ${values.length} production units); expect false fails unless the floor covers production's spread.`,
      })
    }
  }
  return { spread, warnings }
}

function fmt(x: number): string {
  return Number(x.toPrecision(2)).toString()
}
