import type { AnalysisCurves, AnalysisFlags, AnalysisParameters } from '../analysis/index.ts'
import { RATED_IMPEDANCE_MIN_FRACTION } from '../analysis/index.ts'
import { CHECK_LABELS, SCALAR_LIMIT_NAMES, figureValue, limitAtHz, type MaskLimits } from '../../shared/utils/mask.ts'
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
    Partial<Pick<AnalysisParameters, 'peakDbfs'>>
  flags: Pick<AnalysisFlags, 'polarity' | 'openCoil' | 'shortedCoil' | 'noResonance'>
  curves: Pick<AnalysisCurves, 'freqHz' | 'splDb' | 'impedanceOhm'> & Partial<Pick<AnalysisCurves, 'thdPct'>>
}

/** Checks read from sound at the microphone. */
const ACOUSTIC_CHECKS: ReadonlySet<string> = new Set(['polarity', 'sensitivityDb', 'thdMaxPct', 'rubBuzzDb', 'splDb'])

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

function curveCheck(name: 'splDb' | 'impedanceOhm', r: Judgeable, limit: NonNullable<MaskLimits['curves']['splDb']>): Check | null {
  const values = r.curves[name]
  if (!values) return null
  let worst = 0
  let atHz: number | undefined
  let compared = 0
  r.curves.freqHz.forEach((f, i) => {
    const v = values[i]
    if (v == null) return
    const lo = limitAtHz(limit.freqHz, limit.low, f)
    const hi = limitAtHz(limit.freqHz, limit.high, f)
    if (lo === null && hi === null) return
    compared++
    const excess = Math.max(lo !== null ? lo - v : 0, hi !== null ? v - hi : 0)
    if (excess > worst) {
      worst = excess
      atHz = f
    }
  })
  if (compared === 0) return null
  return { name, value: round(worst), low: null, high: 0, unit: CHECK_LABELS[name]!.unit, pass: worst <= 0, ...(atHz ? { atHz: round(atHz) } : {}) }
}

function round(x: number, digits = 4): number {
  return Number(x.toPrecision(digits + 2))
}

/**
 * Applies a mask to one result. Fixed checks first (coil continuity, a resonance where a driver
 * must have one, polarity, the rated-impedance rule of IEC 60268-5), then the scalar limits, then
 * the curves. A result passes only when every check its kind of file can measure was measured and
 * passed: a check whose figure is missing fails without a value and is listed in `undecided` (the
 * analysis service refuses such a recording before it is stored unless a measured check failed); a
 * check the file cannot show by its nature, or cannot show because of a unit fault it found (an
 * open or shorted coil, no resonance), is listed in `unmeasured` and does not decide.
 */
export function judge(r: Judgeable, limits: MaskLimits, ratedImpedanceOhm: number): Judgement {
  const checks: Check[] = []
  const unmeasured: string[] = []
  const undecided: string[] = []
  const { parameters: p, flags } = r
  // A unit fault the file shows decides the verdict, and explains the figures it leaves missing.
  const unitFault = flags.openCoil || flags.shortedCoil || flags.noResonance === true
  // A figure this file should have given but did not: a failing check without a value, and undecided.
  const missing = (name: string, low: number | null = null, high: number | null = null) => {
    if (unitFault || !canMeasure(r, name)) return void unmeasured.push(name)
    undecided.push(name)
    checks.push({ name, value: null, low, high, unit: CHECK_LABELS[name]?.unit ?? '', pass: false })
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
    const value = figureValue(r, name, limits.thdBandHz)
    if (value === null || !Number.isFinite(value)) {
      missing(name, lim.low, lim.high)
      continue
    }
    const pass = (lim.low === null || value >= lim.low) && (lim.high === null || value <= lim.high)
    checks.push({ name, value: round(value), low: lim.low, high: lim.high, unit: CHECK_LABELS[name]!.unit, pass })
  }
  for (const name of ['splDb', 'impedanceOhm'] as const) {
    const lim = limits.curves[name]
    if (!lim) continue
    const c = curveCheck(name, r, lim)
    if (c) checks.push(c)
    else missing(name)
  }
  return { verdict: checks.every((c) => c.pass) ? 'pass' : 'fail', checks, unmeasured, undecided, retestReason: null, warnings: [] }
}

/** Whether a judgement failed only because figures were missing: no measured check failed, the file could not decide. */
export function onlyUndecided(j: Pick<Judgement, 'checks' | 'undecided'>): boolean {
  return j.undecided.length > 0 && j.checks.every((c) => c.pass || j.undecided.includes(c.name))
}

/** The names of the checks a judgement failed, in the order the judge applied them. */
export function failedCheckNames(j: Judgement): string[] {
  return j.checks.filter((c) => !c.pass).map((c) => c.name)
}
