import type { AnalysisCurves, AnalysisFlags, AnalysisParameters } from '../analysis/index.ts'
import { RATED_IMPEDANCE_MIN_FRACTION } from '../analysis/index.ts'
import { CHECK_LABELS, SCALAR_LIMIT_NAMES, figureValue, limitAtHz, type MaskLimits } from '../../shared/utils/mask.ts'
import type { CheckView } from '../../shared/types/api.ts'
import type { Verdict } from '../../shared/utils/verdict.ts'

/** One limit applied to one figure or curve (glossary: check). */
export type Check = CheckView

export interface Judgement {
  verdict: Verdict
  checks: Check[]
  /** Checks the mask holds that this result's data cannot show (e.g. acoustic checks on an impedance table). */
  unmeasured: string[]
}

export interface Judgeable {
  parameters: Pick<AnalysisParameters, 'reOhm' | 're20Ohm' | 'fsHz' | 'qts' | 'sensitivityDb' | 'thdMaxPct' | 'rubBuzzDb' | 'zminOhm' | 'effectiveImpedanceOhm'>
  flags: Pick<AnalysisFlags, 'polarity' | 'openCoil' | 'shortedCoil'>
  curves: Pick<AnalysisCurves, 'freqHz' | 'splDb' | 'impedanceOhm'> & Partial<Pick<AnalysisCurves, 'thdPct'>>
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
 * Applies a mask to one result. Fixed checks first (coil continuity, polarity, the rated-impedance
 * rule of IEC 60268-5), then the scalar limits, then the curves. A check whose figure the result
 * could not measure is listed in `unmeasured` and does not decide the verdict.
 */
export function judge(r: Judgeable, limits: MaskLimits, ratedImpedanceOhm: number): Judgement {
  const checks: Check[] = []
  const unmeasured: string[] = []
  const { parameters: p, flags } = r

  checks.push({ name: 'coil', value: p.effectiveImpedanceOhm, low: null, high: null, unit: 'Ω', pass: !flags.openCoil && !flags.shortedCoil })
  if (limits.polarityNormal) {
    if (flags.polarity === null) unmeasured.push('polarity')
    else checks.push({ name: 'polarity', value: flags.polarity === 'normal' ? 1 : -1, low: 1, high: null, unit: '', pass: flags.polarity === 'normal' })
  }
  if (limits.ratedImpedanceRule) {
    const low = RATED_IMPEDANCE_MIN_FRACTION * ratedImpedanceOhm
    if (p.zminOhm === null) unmeasured.push('ratedImpedance')
    else checks.push({ name: 'ratedImpedance', value: round(p.zminOhm), low: round(low), high: null, unit: 'Ω', pass: p.zminOhm >= low })
  }
  for (const name of SCALAR_LIMIT_NAMES) {
    const lim = limits.scalars[name]
    if (!lim) continue
    const value = figureValue(r, name, limits.thdBandHz)
    if (value === null || !Number.isFinite(value)) {
      unmeasured.push(name)
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
    else unmeasured.push(name)
  }
  return { verdict: checks.every((c) => c.pass) ? 'pass' : 'fail', checks, unmeasured }
}

/** The names of the checks a judgement failed, in the order the judge applied them. */
export function failedCheckNames(j: Judgement): string[] {
  return j.checks.filter((c) => !c.pass).map((c) => c.name)
}
