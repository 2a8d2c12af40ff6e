/**
 * Decision rules near a limit (ISO 14253-1's idea of conformance with measurement uncertainty):
 * simple acceptance decides on the measured value; guarded acceptance shrinks the acceptance zone
 * by the uncertainty, and the engineer chooses whether a figure inside that guard band fails or is
 * measured again. A figure within its uncertainty of a limit is marked marginal when it decides.
 */
import { describe, expect, it } from 'vitest'
import { judge, type Judgeable } from '../../server/verdict/judge'
import { maskLimitsSchema, type DecisionRule } from '../../shared/utils/mask'

const base: Judgeable = {
  kind: 'sweep',
  parameters: { reOhm: 6.1, re20Ohm: null, fsHz: 42, qts: 0.35, sensitivityDb: 88, thdMaxPct: 0.8, rubBuzzDb: -70, zminOhm: 6.6, effectiveImpedanceOhm: 9.5 },
  flags: { polarity: 'normal', openCoil: false, shortedCoil: false },
  curves: { freqHz: [100, 200, 500, 1000, 2000], splDb: [86, 87, 88, 88, 87], impedanceOhm: null },
}
const limitsWith = (decisionRule?: DecisionRule) =>
  maskLimitsSchema.parse({
    scalars: { sensitivityDb: { low: 86.5, high: 89.5 } },
    curves: { splDb: { freqHz: [100, 2000], low: [83, 84], high: [90, 91] } },
    ...(decisionRule ? { decisionRule } : {}),
  })
const sens = (value: number, u: number): Judgeable => ({ ...base, parameters: { ...base.parameters, sensitivityDb: value, sensitivityUncertaintyDb: u } })

describe('decision rules on a figure with its uncertainty (sensitivity 86.5 dB low limit, ± 0.4 dB)', () => {
  // [rule, measured value, verdict, marginal]
  const CASES: [DecisionRule, number, string, boolean][] = [
    // Inside by more than the uncertainty: every rule passes, nothing marginal.
    ['simple', 87.5, 'pass', false],
    ['guarded_fail', 87.5, 'pass', false],
    ['guarded_retest', 87.5, 'pass', false],
    // Inside, within the uncertainty: simple passes (marginal), guarded fails (marginal), or measures again.
    ['simple', 86.7, 'pass', true],
    ['guarded_fail', 86.7, 'fail', true],
    ['guarded_retest', 86.7, 'retest', false],
    // Outside, within the uncertainty: simple and guarded fail (marginal); guarded_retest measures again.
    ['simple', 86.3, 'fail', true],
    ['guarded_fail', 86.3, 'fail', true],
    ['guarded_retest', 86.3, 'retest', false],
    // Outside by more than the uncertainty: every rule fails.
    ['simple', 85.5, 'fail', false],
    ['guarded_fail', 85.5, 'fail', false],
    ['guarded_retest', 85.5, 'fail', false],
  ]
  it.each(CASES)('%s at %d dB: %s', (rule, value, verdict, marginal) => {
    const j = judge(sens(value, 0.4), limitsWith(rule), 8)
    expect(j.verdict).toBe(verdict)
    const c = j.checks.find((x) => x.name === 'sensitivityDb')!
    expect(c.marginal ?? false).toBe(marginal)
    expect(c.uncertainty).toBe(0.4)
  })

  it('masks stored before rules existed keep deciding as guarded_retest (a released mask never changes)', () => {
    expect(limitsWith().decisionRule).toBe('guarded_retest')
    expect(judge(sens(86.7, 0.4), limitsWith(), 8).verdict).toBe('retest')
  })
})

describe('decision rules on a curve, point by point', () => {
  // 500 Hz reads 84.0 dB against a low limit of about 83.5 dB, ± 1 dB there.
  const r: Judgeable = { ...base, parameters: { ...base.parameters, splUncertaintyDb: [0.1, 0.1, 1, 0.1, 0.1] }, curves: { ...base.curves, splDb: [86, 87, 84, 88, 87] } }
  it.each([
    ['simple', 'pass', true],
    ['guarded_fail', 'fail', true],
    ['guarded_retest', 'retest', undefined],
  ] as const)('%s: %s', (rule, verdict, marginal) => {
    const j = judge(r, limitsWith(rule), 8)
    expect(j.verdict).toBe(verdict)
    expect(j.checks.find((c) => c.name === 'splDb')!.marginal).toBe(marginal)
  })
})
