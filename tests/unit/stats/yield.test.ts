import { describe, expect, it } from 'vitest'
import { UNNAMED_CHECK, computeYield, failurePareto, type ProductionResult, type UnitHistory } from '../../../server/stats/index.ts'

const pass: ProductionResult = { verdict: 'pass', failedChecks: [] }
const unjudged: ProductionResult = { verdict: null, failedChecks: [] }
const fail = (...checks: string[]): ProductionResult => ({ verdict: 'fail', failedChecks: checks })
const unit = (serial: string, ...tests: ProductionResult[]): UnitHistory => ({ serial, tests })

// A hand-made lot; each unit's story and what it counts towards (definitions in server/stats/yield.ts):
//   A: pass                      first judged, first pass, final pass
//   B: fail(Fs), pass            first judged, first fail, final pass, retested
//   C: fail(Fs, polarity)        first judged, first fail, final fail
//   D: unjudged, pass            first UNJUDGED (out of FPY), final pass, retested
//   E: unjudged                  never judged
//   F: pass, fail(rub and buzz)  first judged, first pass, final fail, retested
//   G: fail(Re), unjudged        first judged, first fail, final = latest judged = fail, retested
//   H: no result                 not tested: ignored
const LOT: UnitHistory[] = [
  unit('A', pass),
  unit('B', fail('fsHz'), pass),
  unit('C', fail('fsHz', 'polarity')),
  unit('D', unjudged, pass),
  unit('E', unjudged),
  unit('F', pass, fail('rubBuzzDb')),
  unit('G', fail('re20Ohm'), unjudged),
  unit('H'),
]

describe('yield', () => {
  it('counts units tested, judged and never judged', () => {
    const y = computeYield(LOT)
    expect(y.unitsTested).toBe(7) // A–G
    expect(y.unitsJudged).toBe(6) // all but E
    expect(y.unitsNeverJudged).toBe(1) // E
  })

  it('first-pass yield: first result passed / first result judged; an unjudged first result stays out of both', () => {
    const y = computeYield(LOT)
    expect(y.firstResultJudged).toBe(5) // A, B, C, F, G
    expect(y.firstResultUnjudged).toBe(2) // D, E
    expect(y.firstPassUnits).toBe(2) // A, F
    expect(y.firstPassYield).toBeCloseTo(2 / 5, 12)
  })

  it('final yield: latest judged result passes / units judged; a later unjudged result does not count', () => {
    const y = computeYield(LOT)
    expect(y.finalPassUnits).toBe(3) // A, B, D (G's latest judged result is its fail)
    expect(y.finalYield).toBeCloseTo(3 / 6, 12)
  })

  it('retest rate: units with more than one result / units tested', () => {
    const y = computeYield(LOT)
    expect(y.retestedUnits).toBe(4) // B, D, F, G
    expect(y.retestRate).toBeCloseTo(4 / 7, 12)
  })

  it('gives null ratios, not NaN, for an empty lot or a lot never judged', () => {
    expect(computeYield([])).toMatchObject({ unitsTested: 0, firstPassYield: null, finalYield: null, retestRate: null })
    const y = computeYield([unit('E1', unjudged), unit('E2', unjudged, unjudged)])
    expect(y).toMatchObject({ unitsTested: 2, unitsNeverJudged: 2, firstPassYield: null, finalYield: null, retestRate: 0.5 })
  })
})

describe('failure Pareto', () => {
  it('first results: a unit failing several checks counts under each and once under "any"', () => {
    const p = failurePareto(LOT, 'first')
    expect(p.unitsConsidered).toBe(5) // first result judged
    // "any" is the first-pass loss: 5 − 2 first passes = 3 (B, C, G).
    expect(p.any).toEqual({ units: 3, unitFraction: 3 / 5 })
    // Fs: B and C; polarity: C; Re: G. Four check failures in all; ties sorted by name.
    expect(p.rows.map((r) => [r.check, r.units])).toEqual([
      ['fsHz', 2],
      ['polarity', 1],
      ['re20Ohm', 1],
    ])
    expect(p.rows.map((r) => r.fraction)).toEqual([2 / 4, 1 / 4, 1 / 4])
    expect(p.rows.map((r) => r.cumulativeFraction)).toEqual([0.5, 0.75, 1])
    expect(p.rows.map((r) => r.unitFraction)).toEqual([2 / 5, 1 / 5, 1 / 5])
  })

  it('final results: reads the latest judged result of each judged unit', () => {
    const p = failurePareto(LOT, 'final')
    expect(p.unitsConsidered).toBe(6)
    expect(p.any.units).toBe(3) // C, F, G: 6 judged − 3 final passes
    expect(p.rows.map((r) => r.check)).toEqual(['fsHz', 'polarity', 're20Ohm', 'rubBuzzDb'])
    expect(p.rows.map((r) => r.cumulativeFraction)).toEqual([0.25, 0.5, 0.75, 1])
  })

  it('every result: a unit that failed a check on any test counts once under it', () => {
    const p = failurePareto([...LOT, unit('I', fail('fsHz'), fail('fsHz', 'qts'), pass)], 'ever')
    expect(p.unitsConsidered).toBe(7)
    expect(p.any.units).toBe(5) // B, C, F, G, I
    // Fs: B, C and I (I once, though it failed Fs twice).
    expect(p.rows.map((r) => [r.check, r.units])).toEqual([
      ['fsHz', 3],
      ['polarity', 1],
      ['qts', 1],
      ['re20Ohm', 1],
      ['rubBuzzDb', 1],
    ])
    expect(p.rows.map((r) => r.cumulativeFraction)).toEqual([3 / 7, 4 / 7, 5 / 7, 6 / 7, 1])
  })

  it('keeps a failure that names no check, under its own bucket', () => {
    const p = failurePareto([unit('X', fail()), unit('Y', pass)])
    expect(p.any.units).toBe(1)
    expect(p.rows).toEqual([{ check: UNNAMED_CHECK, units: 1, fraction: 1, cumulativeFraction: 1, unitFraction: 0.5 }])
  })

  it('is empty, with a null "any" fraction, when nothing was judged', () => {
    expect(failurePareto([unit('E', unjudged)])).toEqual({
      basis: 'first',
      unitsConsidered: 0,
      any: { units: 0, unitFraction: null },
      rows: [],
      anyRetest: { units: 0, unitFraction: null },
      retests: [],
    })
  })
})
