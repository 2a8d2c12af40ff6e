import { describe, expect, it } from 'vitest'
import { computeYield, failurePareto, type ProductionResult, type UnitHistory } from '../../../server/stats/index.ts'
import type { RetestReason } from '../../../shared/utils/verdict.ts'

// The retest rules of the yields (definitions in server/stats/yield.ts; our product rules, issue 14):
// a retest never counts as a fail, a unit stands by its latest decisive result, and a unit whose
// first result ended retest is not a first pass; the Pareto counts retest reasons apart from checks.
const pass: ProductionResult = { verdict: 'pass', failedChecks: [] }
const unjudged: ProductionResult = { verdict: null, failedChecks: [] }
const fail = (...checks: string[]): ProductionResult => ({ verdict: 'fail', failedChecks: checks })
const retest = (reason: RetestReason): ProductionResult => ({ verdict: 'retest', failedChecks: [], retestReason: reason })
const unit = (serial: string, ...tests: ProductionResult[]): UnitHistory => ({ serial, tests })

//   R1: retest(knock), pass            first judged, NOT first pass (first retest), final pass
//   R2: retest(hum), retest(hum)       first judged, first retest, no decisive result: awaiting a retest
//   R3: pass, retest(level)            first pass, final pass (the later retest decides nothing)
//   R4: fail(Fs), retest(noise)        first fail, final fail (the retest does not clear it)
//   R5: retest(probe), fail(polarity)  first retest, final fail
//   R6: pass                           first pass, final pass
//   R7: unjudged, retest(undecided)    first unjudged (out of the first-pass yield), awaiting a retest
const LOT: UnitHistory[] = [
  unit('R1', retest('transient'), pass),
  unit('R2', retest('hum'), retest('hum')),
  unit('R3', pass, retest('level')),
  unit('R4', fail('fsHz'), retest('noise')),
  unit('R5', retest('probe_fault'), fail('polarity')),
  unit('R6', pass),
  unit('R7', unjudged, retest('undecided')),
]

describe('yield with retests', () => {
  const y = computeYield(LOT)

  it('counts a unit with only retests as awaiting a retest, neither judged nor never judged', () => {
    expect(y).toMatchObject({ unitsTested: 7, unitsJudged: 5, unitsAwaitingRetest: 2, unitsNeverJudged: 0 })
  })

  it('gives no first pass to a unit whose first result ended retest, and keeps it in the denominator', () => {
    expect(y).toMatchObject({ firstResultJudged: 6, firstResultUnjudged: 1, firstPassUnits: 2, firstRetestUnits: 3 })
    expect(y.firstPassYield).toBeCloseTo(2 / 6, 12)
  })

  it('stands each unit by its latest decisive result: a retest is never a fail and never clears one', () => {
    // Final passes: R1, R3, R6; final fails: R4, R5. R2 and R7 have no decisive result.
    expect(y.finalPassUnits).toBe(3)
    expect(y.finalYield).toBeCloseTo(3 / 5, 12)
  })

  it('a lot of retests only has no yield at all, rather than a yield of zero', () => {
    const only = computeYield([unit('X', retest('noise')), unit('Y', retest('hum'), retest('transient'))])
    expect(only).toMatchObject({ unitsJudged: 0, unitsAwaitingRetest: 2, firstPassUnits: 0, firstRetestUnits: 2, finalYield: null })
    expect(only.firstPassYield).toBe(0)
  })
})

describe('Pareto with retests', () => {
  it('first results: retest reasons apart from the failing checks, never among the bars', () => {
    const p = failurePareto(LOT, 'first')
    expect(p.unitsConsidered).toBe(6)
    expect(p.any).toEqual({ units: 1, unitFraction: 1 / 6 }) // R4 only
    expect(p.rows.map((r) => r.check)).toEqual(['fsHz'])
    expect(p.anyRetest).toEqual({ units: 3, unitFraction: 3 / 6 }) // R1, R2, R5
    // Ties keep RETEST_REASONS' order (most urgent first): probe_fault, transient, hum.
    expect(p.retests).toEqual([
      { reason: 'probe_fault', units: 1, unitFraction: 1 / 6 },
      { reason: 'transient', units: 1, unitFraction: 1 / 6 },
      { reason: 'hum', units: 1, unitFraction: 1 / 6 },
    ])
    // The first-pass yield's loss splits into failures and retests.
    const y = computeYield(LOT)
    expect(p.any.units + p.anyRetest.units).toBe(y.firstResultJudged - y.firstPassUnits)
  })

  it('final: the result each unit stands by; a unit with only retests shows its latest reason', () => {
    const p = failurePareto(LOT, 'final')
    expect(p.unitsConsidered).toBe(7)
    expect(p.rows.map((r) => [r.check, r.units])).toEqual([['fsHz', 1], ['polarity', 1]])
    expect(p.retests.map((r) => [r.reason, r.units])).toEqual([['hum', 1], ['undecided', 1]])
  })

  it('ever: each reason a unit met counts once for it, sorted by units, ties most urgent first', () => {
    const p = failurePareto([...LOT, unit('R8', retest('hum'), retest('transient'), pass)], 'ever')
    expect(p.retests.map((r) => [r.reason, r.units])).toEqual([['transient', 2], ['hum', 2], ['probe_fault', 1], ['level', 1], ['noise', 1], ['undecided', 1]])
    expect(p.anyRetest.units).toBe(7)
  })

  it('a retest without a stored reason counts as undecided', () => {
    const p = failurePareto([unit('Z', { verdict: 'retest', failedChecks: [] })])
    expect(p.retests).toEqual([{ reason: 'undecided', units: 1, unitFraction: 1 }])
  })
})
