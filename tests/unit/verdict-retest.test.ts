import { describe, expect, it } from 'vitest'
import { yieldWindow } from '../../server/services/alerts'
import { productCreateSchema, productPatchSchema } from '../../shared/utils/product'
import { checkOutcome, figureWithUncertainty, parameterRows, UNCERTAINTY_SHOWN_FROM } from '../../shared/utils/units'
import { checkValueText } from '../../utils/bench-verdict'
import { DEFAULT_RETEST_LIMIT, RETEST_ADVICE, RETEST_REASONS, isDecisive, retestsInARow, unitVerdictOf, type Verdict } from '../../shared/utils/verdict'

// Our product rules for the retest verdict (issue 14): a retest decides nothing and is never a fail.
const V = (s: string): (Verdict | null)[] => [...s].map((c) => (c === 'p' ? 'pass' : c === 'f' ? 'fail' : c === 'r' ? 'retest' : null))

describe("a unit's verdict and its retests in a row (newest first)", () => {
  it.each([
    ['a retest after a pass leaves the pass', 'rp', 'pass', 1],
    ['a retest after a fail leaves the fail', 'rrf', 'fail', 2],
    ['only retests: retest', 'rrr', 'retest', 3],
    ['a pass after retests: pass, none in a row', 'prr', 'pass', 0],
    ['an unjudged latest test stays unjudged', '-p', null, 0],
    ['unjudged results neither count nor break a run', 'r-r', null, 2],
    ['nothing yet', '', null, 0],
  ])('%s', (_name, verdicts, verdict, inARow) => {
    expect(unitVerdictOf(V(verdicts))).toBe(verdict)
    expect(retestsInARow(V(verdicts))).toBe(inARow)
  })

  it('only pass and fail are decisive', () => {
    expect(['pass', 'fail', 'retest', null].map((v) => isDecisive(v as Verdict | null))).toEqual([true, true, false, false])
  })

  it('every retest reason has the technician\'s words: a label, what happened and what to do', () => {
    for (const r of RETEST_REASONS) {
      expect(RETEST_ADVICE[r].label.length).toBeGreaterThan(3)
      expect(RETEST_ADVICE[r].what.length).toBeGreaterThan(20)
      expect(RETEST_ADVICE[r].todo).toMatch(/again/)
    }
  })
})

describe('low-yield alert window with retests', () => {
  it('skips retests: they are neither passes nor fails, and do not fill the window', () => {
    const w = yieldWindow(V('rrpppf') as Verdict[], { lastN: 4, minYieldPct: 80 })
    expect(w).toMatchObject({ evaluated: true, units: 4, passed: 3, yieldPct: 75, low: true })
    expect(yieldWindow(V('rrrrr') as Verdict[], { lastN: 3, minYieldPct: 80 })).toMatchObject({ evaluated: false, units: 0, low: false })
  })
})

describe('product retest limit', () => {
  it('defaults to 2 and takes whole numbers from 1 to 10', () => {
    const base = { code: 'W1', name: 'Invented woofer', ratedImpedanceOhm: 8 }
    expect(productCreateSchema.parse(base).retestLimit).toBe(DEFAULT_RETEST_LIMIT)
    expect(productCreateSchema.parse({ ...base, retestLimit: 10 }).retestLimit).toBe(10)
    for (const bad of [0, 11, 2.5]) expect(productCreateSchema.safeParse({ ...base, retestLimit: bad }).success).toBe(false)
    expect(productPatchSchema.parse({ retestLimit: 3 })).toEqual({ retestLimit: 3 })
  })
})

describe('check rows that could not decide, below the floor, with uncertainty', () => {
  const checks = [
    { name: 'thdMaxPct', value: 0.4, low: null, high: 3, pass: true, below: true },
    { name: 'sensitivityDb', value: 87.04, low: 86, high: 88, pass: false, undecided: true, uncertainty: 1.3 },
    { name: 'fsHz', value: 61.3, low: 45, high: 60, pass: false },
  ]
  const params = { thdMaxPct: null, sensitivityDb: 87.04, fsHz: 61.3 }

  it('says "could not decide" for an undecided check, never fail', () => {
    expect(checks.map(checkOutcome)).toEqual(['pass', 'undecided', 'fail'])
    const rows = parameterRows(params, null, checks)
    const row = (k: string) => rows.find((r) => r.key === k)!
    expect(row('sensitivityDb')).toMatchObject({ value: '87.0 ± 1.3', outcome: 'undecided' })
    expect(row('thdMaxPct')).toMatchObject({ value: 'below 0.400', outcome: 'pass' })
    expect(row('fsHz')).toMatchObject({ value: '61.3', outcome: 'fail' })
  })

  it('writes a figure alone without a check or an uncertainty, and keeps a dash for a missing one', () => {
    expect(figureWithUncertainty('61.3', undefined)).toBe('61.3')
    expect(figureWithUncertainty('–', { value: null, uncertainty: 0.5 })).toBe('–')
  })

  it('leaves out an uncertainty too small to matter (a clean recording’s), keeps one from the threshold up', () => {
    expect(figureWithUncertainty('89.50', { value: 89.5, uncertainty: 0.001 })).toBe('89.50')
    expect(figureWithUncertainty('89.50', { value: 89.5, uncertainty: UNCERTAINTY_SHOWN_FROM })).toBe('89.50 ± 0.0050')
    expect(figureWithUncertainty('89.50', { value: 89.5, uncertainty: 0.034 })).toBe('89.50 ± 0.034')
  })
})

describe('a curve check as the bench writes it', () => {
  const curve = { name: 'splDb', low: null, high: 0, unit: 'dB' }
  it('names how far over and where, or that it stayed inside and where it came closest', () => {
    expect(checkValueText({ ...curve, value: 1.5, atHz: 80, pass: false })).toBe('1.50 over at 80.0 Hz')
    expect(checkValueText({ ...curve, value: 0, atHz: 12232, pass: true })).toBe('inside, closest at 12232 Hz')
  })

  it('gives the uncertainty of a point that could not decide', () => {
    expect(checkValueText({ ...curve, value: 0, atHz: 500, uncertainty: 1, pass: false, undecided: true })).toBe('inside, closest at 500 Hz (± 1.0)')
  })
})
