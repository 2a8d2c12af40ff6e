/**
 * Proposed mask limits from golden units: the statistical starting point of a new mask, before the
 * engineer edits, previews and releases it.
 *
 * Pure: no database, no HTTP. Every limit is the golden mean ± max(k·σ, floor), with σ the sample
 * standard deviation (n − 1 in the denominator, Bessel's correction; NIST/SEMATECH e-Handbook of
 * Statistical Methods, "Measures of Scale", section 1.3.5.6 from memory). k = 3 by default: for a
 * normal population mean ± 3σ holds about 99.73 % of good units (the three-sigma convention of
 * Shewhart control limits, e-Handbook chapter 6.3). The floor keeps a limit from collapsing onto the measurement's own
 * repeatability when the golden units happen to agree closely (common practice).
 *
 * The engineer edits every proposed figure afterwards; these are starting points, not rules.
 */
import { summarize } from '../stats/summary.ts'
import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import { DEFAULT_SWEEP, OCTAVE_RATIO_BASE10, valueAtHz } from '../analysis/index.ts'
import type { AnalysisCurves, AnalysisFlags, AnalysisParameters } from '../analysis/index.ts'
import { SCALAR_LIMIT_NAMES, figureValue, type MaskLimits, type ScalarLimitName } from '../../shared/utils/mask.ts'

/** Fewer golden units than this gives a standard deviation too uncertain to build limits on. */
export const MIN_GOLDEN_UNITS = 5
export const DEFAULT_K = 3
/** Response-curve floor, dB (our default: keeps the band off the response's own repeatability when the golden curves agree closely). */
export const DEFAULT_CURVE_FLOOR_DB = 1.5
/** Impedance-curve floor as a fraction of the mean |Z| at each frequency: ±5 % (our choice, common practice in spirit). */
export const DEFAULT_IMPEDANCE_FLOOR_FRACTION = 0.05

/**
 * Minimum half-width of each scalar limit, in the figure's own unit. Our choices, sized a little
 * above what a station repeats to on the same unit (from memory of typical end-of-line gauges):
 * - Re at 20 °C: 0.1 Ω (a couple of per cent of a 4–8 Ω driver's Re);
 * - Fs: 2 Hz (a woofer's Fs drifts by about that with cone temperature and exercise);
 * - Qts: 0.02;
 * - sensitivity: 0.5 dB;
 * - THD max: 0.5 percentage points (upper limit only);
 * - rub and buzz: 3 dB (upper limit only; the metric is a level re the fundamental, in dB).
 */
export const DEFAULT_SCALAR_FLOORS: Readonly<Record<ScalarLimitName, number>> = Object.freeze({
  re20Ohm: 0.1,
  fsHz: 2,
  qts: 0.02,
  sensitivityDb: 0.5,
  thdMaxPct: 0.5,
  rubBuzzDb: 3,
})

/** Figures judged against an upper limit only: less distortion or less rub and buzz is never a fault. */
export const UPPER_ONLY: ReadonlySet<ScalarLimitName> = new Set(['thdMaxPct', 'rubBuzzDb'])

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
  /** Multiplier of σ (default 3). */
  k?: number
  /** Floor of the response band, dB (default 1.5). */
  floorDb?: number
  /** Response band range; default the sweep band less its last one-third octave. */
  fromHz?: number
  toHz?: number
  /** The sweep the golden units were measured with: only its band is read (default 20 Hz–20 kHz). */
  sweepBandHz?: [number, number]
  /** Per-side overrides and extra-margin regions of the response band. */
  response?: Omit<CurveProposalOptions, 'fromHz' | 'toHz'> | false
  /** Propose an impedance-curve band too (off by default); floors are fractions of the mean |Z|. */
  impedance?: (CurveProposalOptions & { floorFraction?: number }) | boolean
  /** Band for the THD maximum (default: the whole measured band). */
  thdBandHz?: [number, number]
  /** Overrides of the scalar floors; a name mapped to null leaves that figure without a limit. */
  scalarFloors?: Partial<Record<ScalarLimitName, number | null>>
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

/** A curve's value at grid point i (frequency f): exact when the grids agree there, else interpolated. */
function pointValue(freqHz: readonly number[], values: readonly (number | null)[], i: number, f: number): number | null {
  const fi = freqHz[i]
  if (fi !== undefined && Math.abs(fi - f) <= 1e-9 * f) return values[i] ?? null
  return valueAtHz(freqHz, values, f)
}

interface CurveBandSpec {
  fromHz: number
  toHz: number
  upper: { k: number; floor: (mean: number) => number }
  lower: { k: number; floor: (mean: number) => number }
  regions: MarginRegion[]
}

/**
 * The band mean ± max(k·σ, floor) at each point of the golden units' standard grid within
 * [fromHz, toHz]. A point where fewer than MIN_GOLDEN_UNITS curves have a value stays open (null),
 * which judge() skips. Returns undefined when no golden unit has this curve.
 */
export function proposeCurveBand(
  golden: readonly GoldenResult[],
  curve: 'splDb' | 'impedanceOhm',
  spec: CurveBandSpec,
): NonNullable<MaskLimits['curves']['splDb']> | undefined {
  const withCurve = golden.filter((g) => g.curves[curve])
  if (withCurve.length === 0) return undefined
  // Every result shares the standard grid from 10 Hz; the longest one covers the others.
  const grid = withCurve.reduce((a, g) => (g.curves.freqHz.length > a.length ? g.curves.freqHz : a), [] as readonly number[])
  const tol = 1e-9
  const freqHz: number[] = []
  const low: (number | null)[] = []
  const high: (number | null)[] = []
  grid.forEach((f, i) => {
    if (f < spec.fromHz * (1 - tol) || f > spec.toHz * (1 + tol)) return
    const s = summarize(withCurve.map((g) => pointValue(g.curves.freqHz, g.curves[curve]!, i, f)))
    freqHz.push(round(f, 6))
    if (!s || s.n < MIN_GOLDEN_UNITS) {
      low.push(null)
      high.push(null)
      return
    }
    let up = halfWidth(s.sd, spec.upper.k, spec.upper.floor(s.mean))
    let down = halfWidth(s.sd, spec.lower.k, spec.lower.floor(s.mean))
    for (const r of spec.regions) {
      if (f >= r.fromHz && f <= r.toHz) {
        up += r.upper ?? 0
        down += r.lower ?? 0
      }
    }
    high.push(round(s.mean + up))
    low.push(round(s.mean - down))
  })
  if (freqHz.length < 2) return undefined
  return { freqHz, low, high }
}

/**
 * Proposes a mask from golden units: scalar limits for Re (20 °C), Fs, Qts and sensitivity as
 * mean ± max(k·σ, floor); THD max and rub and buzz as upper limits only; polarity must be normal;
 * the rated-impedance rule of IEC 60268-5 on; a response band (and, when asked, an impedance band)
 * on the standard grid. A figure that fewer than MIN_GOLDEN_UNITS golden units measured gets no
 * limit (e.g. sensitivity when most goldens are impedance tables).
 * @throws ProposeError `too_few_golden_units` below MIN_GOLDEN_UNITS, `invalid_proposal_options` for a bad k, floor or range.
 */
export function proposeLimits(golden: readonly GoldenResult[], opts: ProposeOptions = {}): MaskLimits {
  if (golden.length < MIN_GOLDEN_UNITS) {
    throw new ProposeError('too_few_golden_units', `A mask needs at least ${MIN_GOLDEN_UNITS} golden units; ${golden.length} given`)
  }
  const k = opts.k ?? DEFAULT_K
  checkPositive('k', k)
  checkPositive('floorDb', opts.floorDb)

  const scalars: MaskLimits['scalars'] = {}
  for (const name of SCALAR_LIMIT_NAMES) {
    const floor = opts.scalarFloors?.[name] === undefined ? DEFAULT_SCALAR_FLOORS[name] : opts.scalarFloors[name]
    if (floor === null) continue
    checkPositive(`scalarFloors.${name}`, floor)
    const s = summarize(golden.map((g) => figureValue(g, name, opts.thdBandHz)))
    if (!s || s.n < MIN_GOLDEN_UNITS) continue
    const w = halfWidth(s.sd, k, floor)
    scalars[name] = UPPER_ONLY.has(name) ? { low: null, high: round(s.mean + w) } : { low: round(s.mean - w), high: round(s.mean + w) }
  }

  const sweepBand = opts.sweepBandHz ?? [DEFAULT_SWEEP.f1Hz, DEFAULT_SWEEP.f2Hz]
  const [defFrom, defTo] = defaultCurveRange(sweepBand)
  const curves: MaskLimits['curves'] = {}

  if (opts.response !== false) {
    const r = opts.response ?? {}
    const floorDb = opts.floorDb ?? DEFAULT_CURVE_FLOOR_DB
    const spec = bandSpec(opts.fromHz ?? defFrom, opts.toHz ?? defTo, k, r, () => floorDb, (v) => () => v)
    const band = proposeCurveBand(golden, 'splDb', spec)
    if (band) curves.splDb = band
  }

  if (opts.impedance) {
    const z = opts.impedance === true ? {} : opts.impedance
    const fraction = z.floorFraction ?? DEFAULT_IMPEDANCE_FLOOR_FRACTION
    checkPositive('impedance.floorFraction', fraction)
    // Side floors, when given, are fractions of the mean too.
    const spec = bandSpec(z.fromHz ?? defFrom, z.toHz ?? defTo, k, z, (m) => fraction * m, (v) => (m) => v * m)
    const band = proposeCurveBand(golden, 'impedanceOhm', spec)
    if (band) curves.impedanceOhm = band
  }

  return { scalars, polarityNormal: true, ratedImpedanceRule: true, curves, thdBandHz: opts.thdBandHz ?? null }
}

function bandSpec(
  fromHz: number,
  toHz: number,
  k: number,
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
    upper: { k: o.upper?.k ?? k, floor: o.upper?.floor !== undefined ? sideFloor(o.upper.floor) : floor },
    lower: { k: o.lower?.k ?? k, floor: o.lower?.floor !== undefined ? sideFloor(o.lower.floor) : floor },
    regions: o.regions ?? [],
  }
}
