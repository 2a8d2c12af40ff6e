import type { AnalysisCurves, AnalysisFlags, AnalysisParameters, Disturbance } from '../analysis/index.ts'
import { RATED_IMPEDANCE_MIN_FRACTION } from '../analysis/index.ts'
import { CHECK_LABELS, SCALAR_LIMIT_NAMES, figureValue, limitAtHz, type DecisionRule, type MaskLimits } from '../../shared/utils/mask.ts'
import { COVERAGE_K, THD_CLEAR_RATIO, levelUncertaintyDb } from '../analysis/noise-floor.ts'
import { EVENT_MARGIN_DB } from '../analysis/transient.ts'
import type { CheckView } from '../../shared/types/api.ts'
import type { RetestReason, Verdict } from '../../shared/utils/verdict.ts'

/** One limit applied to one figure or curve (glossary: check). */
export type Check = CheckView

export interface Judgement {
  verdict: Verdict
  checks: Check[]
  /** Checks the mask holds that this kind of file cannot show (e.g. acoustic checks on an impedance table). */
  unmeasured: string[]
  /**
   * Checks this file should have measured but could not (a figure missing where its kind and its
   * channels can give one). Never a pass: with no failed check the result is undecided.
   */
  undecided: string[]
  /** Why the verdict is `retest` (null otherwise). */
  retestReason: RetestReason | null
  /** Things the station should look at that did not change the verdict (e.g. a level 1–6 dB off its profile). */
  warnings: string[]
}

export interface Judgeable {
  kind: 'sweep' | 'impedance_table'
  parameters: Pick<AnalysisParameters, 'reOhm' | 're20Ohm' | 'fsHz' | 'qts' | 'sensitivityDb' | 'thdMaxPct' | 'rubBuzzDb' | 'zminOhm' | 'effectiveImpedanceOhm'> &
    Partial<
      Pick<
        AnalysisParameters,
        'qms' | 'qes' | 'leMh' | 'peakDbfs' | 'levelOffsetDb' | 'sensitivityUncertaintyDb' | 'rubBuzzFloorDb' | 'splUncertaintyDb' | 'thdFloorPct' | 'thdMaxBandHz' | 'disturbances' | 'warnings'
      >
    >
  flags: Pick<AnalysisFlags, 'polarity' | 'openCoil' | 'shortedCoil' | 'noResonance'>
  curves: Pick<AnalysisCurves, 'freqHz' | 'splDb' | 'impedanceOhm'> & Partial<Pick<AnalysisCurves, 'thdPct'>>
}

/** Checks read from sound at the microphone. */
const ACOUSTIC_CHECKS: ReadonlySet<string> = new Set(['polarity', 'sensitivityDb', 'thdMaxPct', 'rubBuzzDb', 'splDb'])

/**
 * A played level this far from the profile's makes the recording undecidable (`retest`, `level`);
 * from LEVEL_WARN_DB on, the result carries a warning. A doubling (6.02 dB) is still inside: the
 * figures are read relative to the drive, and level changes of ±6 dB leave them unchanged.
 */
export const LEVEL_RETEST_DB = 6.5
export const LEVEL_WARN_DB = 1

/**
 * Whether a file of this kind, with these channels, can give the check's figure: an impedance table
 * gives no acoustic figure; a sweep gives acoustic figures with a microphone channel and electrical
 * ones with a current (sense) channel. Channels are known from their peak levels (absent: all present).
 */
export function canMeasure(r: Pick<Judgeable, 'kind' | 'parameters'>, check: string): boolean {
  const acoustic = ACOUSTIC_CHECKS.has(check)
  if (r.kind === 'impedance_table') return !acoustic
  const peaks = r.parameters.peakDbfs
  if (!peaks) return true
  return acoustic ? peaks.mic != null : peaks.sense != null && (check !== 'coil' || peaks.drive != null)
}

/** How a figure with its uncertainty lies against a limit: inside, outside, or straddling it. */
type Standing = 'inside' | 'outside' | 'straddles'

function stand(value: number, u: number, low: number | null, high: number | null): Standing {
  if ((low !== null && value + u < low) || (high !== null && value - u > high)) return 'outside'
  if ((low === null || value - u >= low) && (high === null || value + u <= high)) return 'inside'
  return 'straddles'
}

/**
 * How a figure with its uncertainty u stands under the mask's decision rule (shared/utils/mask.ts
 * DECISION_RULES), and whether it is marginal: within its uncertainty of a limit yet decided.
 * - simple: the value alone decides;
 * - guarded_fail: only a value inside by more than u passes (the acceptance zone shrinks by u);
 * - guarded_retest: within u of a limit, on either side, cannot decide.
 */
function standBy(rule: DecisionRule, value: number, u: number, low: number | null, high: number | null): { standing: Standing; marginal: boolean } {
  const s = stand(value, u, low, high)
  if (rule === 'guarded_retest' || s !== 'straddles') return { standing: s, marginal: false }
  return { standing: rule === 'simple' ? stand(value, 0, low, high) : 'outside', marginal: true }
}

/** Why a check could not decide, in the order a retest reason is chosen. */
type Cause = 'transient' | 'noise' | 'missing'

interface Decided {
  check: Check
  cause: Cause | null
}

function decided(check: Omit<Check, 'pass'>, standing: Standing | { standing: Standing; marginal: boolean }, cause: Cause = 'noise'): Decided {
  const { standing: st, marginal } = typeof standing === 'string' ? { standing, marginal: false } : standing
  if (st === 'straddles') return { check: { ...check, pass: false, undecided: true }, cause }
  return { check: { ...check, pass: st === 'inside', ...(marginal ? { marginal: true } : {}) }, cause: null }
}

function inSpan(f: number, spans: readonly Disturbance[]): boolean {
  return spans.some((d) => d.fromHz !== undefined && d.toHz !== undefined && f >= d.fromHz && f <= d.toHz)
}

/**
 * A curve against its limit curve, point by point with each point's uncertainty: outside at a point
 * decides a fail, unless a transient disturbed that part of the sweep; straddling anywhere (and
 * outside nowhere) cannot decide. The value is the worst excess over the limit (≤ 0 inside).
 */
function curveCheck(name: 'splDb' | 'impedanceOhm', r: Judgeable, limit: NonNullable<MaskLimits['curves']['splDb']>, rule: DecisionRule): Decided | null {
  const values = r.curves[name]
  if (!values) return null
  const unc = name === 'splDb' ? r.parameters.splUncertaintyDb : null
  const transients = (r.parameters.disturbances ?? []).filter((d) => d.code === 'transient')
  let worst = Number.NEGATIVE_INFINITY
  let atHz: number | undefined
  let compared = 0
  let outside = false
  let cause: Cause | null = null
  let straddle: { f: number; u: number; excess: number } | null = null
  let marginal = false
  r.curves.freqHz.forEach((f, i) => {
    const v = values[i]
    if (v == null) return
    const lo = limitAtHz(limit.freqHz, limit.low, f)
    const hi = limitAtHz(limit.freqHz, limit.high, f)
    if (lo === null && hi === null) return
    compared++
    const u = unc?.[i] ?? 0
    const excess = Math.max(lo !== null ? lo - v : Number.NEGATIVE_INFINITY, hi !== null ? v - hi : Number.NEGATIVE_INFINITY)
    if (excess > worst) {
      worst = excess
      atHz = f
    }
    const { standing: s, marginal: m } = standBy(rule, v, u, lo, hi)
    marginal ||= m
    if (s === 'inside') return
    if (inSpan(f, transients)) cause = 'transient'
    else if (s === 'outside') outside = true
    else {
      cause ??= 'noise'
      if (!straddle || excess > straddle.excess) straddle = { f, u, excess }
    }
  })
  if (compared === 0) return null
  const check = { name, value: round(Math.max(worst, 0)), low: null, high: 0, unit: CHECK_LABELS[name]!.unit, ...(atHz ? { atHz: round(atHz) } : {}), ...(marginal ? { marginal: true } : {}) }
  if (outside) return { check: { ...check, pass: false }, cause: null }
  // Undecided by noise: the point whose uncertainty reaches over the limit, with that uncertainty.
  const near = straddle as { f: number; u: number; excess: number } | null
  if (cause === 'noise' && near) return { check: { ...check, value: round(Math.max(near.excess, 0)), atHz: round(near.f), uncertainty: round(near.u), pass: false, undecided: true }, cause }
  if (cause) return { check: { ...check, pass: false, undecided: true }, cause }
  return { check: { ...check, pass: true }, cause: null }
}

/**
 * The THD maximum in the mask's band, from the THD curve and its floor: a reading clear of the noise
 * counts with its uncertainty (k = 2 times the noise's THD); a point below the floor counts with the
 * floor as its bound. Null when the result has no floor curve (made before it existed): the plain
 * figure decides then.
 */
function thdBandCheck(r: Judgeable, lim: { low: number | null; high: number | null }, band: readonly [number, number], rule: DecisionRule): Decided | null {
  const thd = r.curves.thdPct
  const floor = r.parameters.thdFloorPct
  if (!thd || !floor) return null
  const transients = (r.parameters.disturbances ?? []).filter((d) => d.code === 'transient')
  let maxClear: { v: number; u: number; f: number } | null = null
  let maxBelow: { v: number; f: number } | null = null
  let outside = false
  let cause: Cause | null = null
  // A reading that could not decide, and the highest floor over the limit (where "below x" cannot decide).
  let clearUndecided = false
  let floorOver: { v: number; f: number } | null = null
  let marginal = false
  r.curves.freqHz.forEach((f, i) => {
    if (f < band[0] || f > band[1]) return
    const v = thd[i]
    const fl = floor[i]
    if (v != null) {
      const u = fl != null ? (COVERAGE_K * fl) / THD_CLEAR_RATIO : 0
      if (!maxClear || v > maxClear.v) maxClear = { v, u, f }
      const { standing: s, marginal: m } = standBy(rule, v, u, lim.low, lim.high)
      marginal ||= m
      if (s === 'inside') return
      if (inSpan(f, transients)) [cause, clearUndecided] = ['transient', true]
      else if (s === 'outside') outside = true
      else [cause, clearUndecided] = [cause ?? 'noise', true]
    } else if (fl != null) {
      if (!maxBelow || fl > maxBelow.v) maxBelow = { v: fl, f }
      if (lim.high !== null && fl > lim.high) {
        cause ??= inSpan(f, transients) ? 'transient' : 'noise'
        if (!floorOver || fl > floorOver.v) floorOver = { v: fl, f }
      }
    }
  })
  const clear = maxClear as { v: number; u: number; f: number } | null
  const below = maxBelow as { v: number; f: number } | null
  const over = floorOver as { v: number; f: number } | null
  if (!clear && !below) return null
  // What the check shows: the reading that decided, or, when only a floor over the limit kept it
  // from deciding, that floor ("below x" with x over the limit says why).
  const bound = over && !outside && !clearUndecided ? over : clear ? null : below!
  const check: Omit<Check, 'pass'> = {
    name: 'thdMaxPct',
    value: round(bound ? bound.v : clear!.v),
    low: lim.low,
    high: lim.high,
    unit: CHECK_LABELS.thdMaxPct!.unit,
    atHz: round(bound ? bound.f : clear!.f),
    ...(bound ? { below: true } : { uncertainty: round(clear!.u) }),
    ...(marginal ? { marginal: true } : {}),
  }
  if (outside) return { check: { ...check, pass: false }, cause: null }
  if (cause) return { check: { ...check, pass: false, undecided: true }, cause }
  return { check: { ...check, pass: true }, cause: null }
}

/**
 * Rub and buzz against its limit. A level within EVENT_MARGIN_DB of the residual's floor is the
 * noise's own peak, so the unit's buzz is at most that (`below`): inside the limit it passes; above
 * it the recording cannot tell buzz from noise.
 */
function rubBuzzCheck(r: Judgeable, value: number, lim: { low: number | null; high: number | null }, rule: DecisionRule): Decided {
  const floor = r.parameters.rubBuzzFloorDb
  const base = { name: 'rubBuzzDb', low: lim.low, high: lim.high, unit: CHECK_LABELS.rubBuzzDb!.unit }
  if (floor == null) return decided({ ...base, value: round(value) }, stand(value, 0, lim.low, lim.high))
  if (value <= floor + EVENT_MARGIN_DB) return decided({ ...base, value: round(value), below: true }, lim.high === null || value <= lim.high ? 'inside' : 'straddles')
  const u = levelUncertaintyDb(Math.pow(10, value / 20), Math.pow(10, floor / 20)) ?? 0
  return decided({ ...base, value: round(value), uncertainty: round(u) }, standBy(rule, value, u, lim.low, lim.high))
}

function round(x: number, digits = 4): number {
  return Number(x.toPrecision(digits + 2))
}

/** The retest reason a set of causes and disturbances gives, most urgent first (RETEST_REASONS' order). */
function retestReason(causes: readonly Cause[], disturbances: readonly Disturbance[], levelOff: boolean): RetestReason | null {
  if (disturbances.some((d) => d.code === 'probe_fault' && d.retest)) return 'probe_fault'
  if (levelOff) return 'level'
  if (disturbances.some((d) => d.code === 'transient' && d.retest) || causes.includes('transient')) return 'transient'
  if (causes.includes('noise')) return disturbances.some((d) => d.code === 'hum') ? 'hum' : 'noise'
  if (causes.includes('missing')) return 'undecided'
  return null
}

/**
 * Applies a mask to one result. Fixed checks first (coil continuity, a resonance where a driver
 * must have one, polarity, the rated-impedance rule of IEC 60268-5), then the scalar limits, then
 * the curves. A result passes only when every check its kind of file can measure was measured and
 * decided inside its limits. It fails on a unit fault the file shows (open or shorted coil, no
 * resonance) or a check decided outside its limits. Otherwise it ends `retest` when a check could not
 * decide (its figure missing, its uncertainty straddling the limit, a transient over the part that
 * failed) or the recording itself cannot decide (a played level far from the profile, a knock loud
 * enough to read as rub and buzz). A check the file cannot show by its nature, or because of a unit
 * fault it found, is listed in `unmeasured` and does not decide.
 */
export function judge(r: Judgeable, limits: MaskLimits, ratedImpedanceOhm: number): Judgement {
  const checks: Check[] = []
  const unmeasured: string[] = []
  const undecided: string[] = []
  const causes: Cause[] = []
  const { parameters: p, flags } = r
  // Masks made before decision rules existed decided as guarded_retest does.
  const rule = limits.decisionRule ?? 'guarded_retest'
  const disturbances = p.disturbances ?? []
  const warnings = [...(p.warnings ?? [])]
  const add = (d: Decided | null) => {
    if (!d) return
    checks.push(d.check)
    if (d.cause) {
      causes.push(d.cause)
      undecided.push(d.check.name)
    }
  }
  // A unit fault the file shows decides the verdict, and explains the figures it leaves missing.
  const unitFault = flags.openCoil || flags.shortedCoil || flags.noResonance === true
  // A figure this file should have given but did not: a check without a value that cannot decide.
  const missing = (name: string, low: number | null = null, high: number | null = null) => {
    if (unitFault || !canMeasure(r, name)) return void unmeasured.push(name)
    add({ check: { name, value: null, low, high, unit: CHECK_LABELS[name]?.unit ?? '', pass: false, undecided: true }, cause: 'missing' })
  }

  if (canMeasure(r, 'coil')) checks.push({ name: 'coil', value: p.effectiveImpedanceOhm, low: null, high: null, unit: 'Ω', pass: !flags.openCoil && !flags.shortedCoil })
  else unmeasured.push('coil')
  if (flags.noResonance) checks.push({ name: 'resonance', value: null, low: null, high: null, unit: '', pass: false })
  if (limits.polarityNormal) {
    if (flags.polarity === null) missing('polarity')
    else checks.push({ name: 'polarity', value: flags.polarity === 'normal' ? 1 : -1, low: 1, high: null, unit: '', pass: flags.polarity === 'normal' })
  }
  if (limits.ratedImpedanceRule) {
    const low = RATED_IMPEDANCE_MIN_FRACTION * ratedImpedanceOhm
    if (p.zminOhm === null) missing('ratedImpedance', round(low))
    else checks.push({ name: 'ratedImpedance', value: round(p.zminOhm), low: round(low), high: null, unit: 'Ω', pass: p.zminOhm >= low })
  }
  for (const name of SCALAR_LIMIT_NAMES) {
    const lim = limits.scalars[name]
    if (!lim) continue
    // The THD maximum is read from its curve and floor: over the mask's band, or the engine's own search band.
    const thdBand = limits.thdBandHz ?? p.thdMaxBandHz ?? null
    const band = name === 'thdMaxPct' && thdBand ? thdBandCheck(r, lim, thdBand, rule) : null
    if (band) {
      add(band)
      continue
    }
    const value = figureValue(r, name, limits.thdBandHz)
    if (value === null || !Number.isFinite(value)) {
      missing(name, lim.low, lim.high)
      continue
    }
    if (name === 'rubBuzzDb') {
      add(rubBuzzCheck(r, value, lim, rule))
      continue
    }
    const u = name === 'sensitivityDb' ? (p.sensitivityUncertaintyDb ?? 0) : 0
    add(decided({ name, value: round(value), low: lim.low, high: lim.high, unit: CHECK_LABELS[name]!.unit, ...(u > 0 ? { uncertainty: round(u) } : {}) }, standBy(rule, value, u, lim.low, lim.high)))
  }
  for (const name of ['splDb', 'impedanceOhm'] as const) {
    const lim = limits.curves[name]
    if (!lim) continue
    const c = curveCheck(name, r, lim, rule)
    if (c) add(c)
    else missing(name)
  }
  const levelOffset = p.levelOffsetDb ?? null
  const levelOff = levelOffset !== null && Math.abs(levelOffset) > LEVEL_RETEST_DB
  if (levelOffset !== null && Math.abs(levelOffset) > LEVEL_WARN_DB) {
    warnings.push(`The sweep was played ${Math.abs(levelOffset).toFixed(1)} dB ${levelOffset > 0 ? 'above' : 'below'} the station profile's level: check the amplifier gain and the profile.`)
  }
  const decidedFail = unitFault || checks.some((c) => !c.pass && !c.undecided)
  // A station fault (a dead probe, a level far off) keeps the whole recording from deciding, failed
  // checks too; a unit fault decides whatever else the recording shows.
  const stationFault = levelOff || disturbances.some((d) => d.code === 'probe_fault' && d.retest)
  const reason = unitFault ? null : stationFault || !decidedFail ? retestReason(causes, disturbances, levelOff) : null
  const verdict = unitFault || (decidedFail && !stationFault) ? 'fail' : reason ? 'retest' : 'pass'
  return { verdict, checks, unmeasured, undecided, retestReason: verdict === 'retest' ? reason : null, warnings }
}

/** Whether a judgement could not decide only because figures were missing: no measured check failed. */
export function onlyUndecided(j: Pick<Judgement, 'checks' | 'undecided'>): boolean {
  return j.undecided.length > 0 && j.checks.every((c) => c.pass || j.undecided.includes(c.name))
}

/** The names of the checks a judgement failed, in the order the judge applied them. */
export function failedCheckNames(j: Judgement): string[] {
  return j.checks.filter((c) => !c.pass && !c.undecided).map((c) => c.name)
}
