import { describe, expect, it } from 'vitest'
import { mean, sampleStandardDeviation } from 'simple-statistics'
import { acceptedValues, toleranceWidth, verificationLimits } from '../../../server/limits/verification'
import type { FigureSource } from '../../../shared/utils/mask'

const source = (fsHz: number, reOhm: number): FigureSource => ({ parameters: { fsHz, re20Ohm: reOhm } }) as FigureSource

describe('accepted values of a reference unit', () => {
  it('are the sample mean and SD of each figure (simple-statistics as the reference)', () => {
    const fs = [52.1, 52.6, 51.8, 52.3]
    const a = acceptedValues(fs.map((f, i) => source(f, 3.2 + i * 0.01)), null)
    expect(a.fsHz).toEqual({ value: expect.closeTo(mean(fs), 12), sd: expect.closeTo(sampleStandardDeviation(fs), 12), n: 4 })
    expect(a.re20Ohm!.n).toBe(4)
    // Figures no measurement has are left out.
    expect(a.qts).toBeUndefined()
  })
})

// The rule (shared/utils/reference-units.ts): ± max(3 s, a tenth of the tolerance width); the tenth
// is common practice ("ten per cent rule" of measurement-system practice). Widths by arithmetic.
describe('tolerance width and verification limits', () => {
  it('takes the mask limit\'s width, twice the distance to a one-sided limit, else twice the floor', () => {
    expect(toleranceWidth('fsHz', 50, { fsHz: { low: 45, high: 57 } }, null)).toBe(12)
    expect(toleranceWidth('thdMaxPct', 0.8, { thdMaxPct: { low: null, high: 3 } }, null)).toBeCloseTo(4.4, 12)
    // Fs floor 10 % by default, 20 % when the product says so; sensitivity's floor is in dB.
    expect(toleranceWidth('fsHz', 50, null, null)).toBeCloseTo(10, 12)
    expect(toleranceWidth('fsHz', 50, null, { fsHz: 20 })).toBeCloseTo(20, 12)
    expect(toleranceWidth('sensitivityDb', 88, null, null)).toBeCloseTo(2, 12)
  })

  it('sets the half-width by the larger term and says which', () => {
    const accepted = { fsHz: { value: 50, sd: 0.1, n: 5 }, re20Ohm: { value: 3.2, sd: 0.05, n: 5 } }
    const limits = verificationLimits(accepted, { fsHz: { low: 45, high: 57 }, re20Ohm: { low: 3.0, high: 3.4 } }, null)
    // Fs: 3 × 0.1 = 0.3 < 12 / 10 = 1.2.
    expect(limits.fsHz).toEqual({ low: 48.8, high: 51.2, rule: 'tolerance_share', toleranceWidth: 12 })
    // Re: 3 × 0.05 = 0.15 > 0.4 / 10 = 0.04: the station's own repeatability sets it.
    expect(limits.re20Ohm!.rule).toBe('repeatability')
    expect(limits.re20Ohm!.low).toBeCloseTo(3.05, 12)
    expect(limits.re20Ohm!.high).toBeCloseTo(3.35, 12)
  })

  it('sets no default limit on THD or rub and buzz (a good unit reads the noise floor there), only the engineer\'s own', () => {
    const accepted = { thdMaxPct: { value: 0.5, sd: 0.01, n: 3 }, rubBuzzDb: { value: -58, sd: 0.5, n: 3 } }
    expect(verificationLimits(accepted, { thdMaxPct: { low: null, high: 3 } }, null)).toEqual({})
    expect(verificationLimits(accepted, null, null, { rubBuzzDb: { low: -70, high: -50 } })).toEqual({ rubBuzzDb: { low: -70, high: -50, rule: 'engineer', toleranceWidth: null } })
  })

  it('keeps the engineer\'s own limit as given, and skips figures without an accepted value', () => {
    const limits = verificationLimits({ fsHz: { value: 50, sd: 0.1, n: 5 } }, null, null, { fsHz: { low: 49, high: 51 }, qts: { low: 0.3, high: 0.4 } })
    expect(limits).toEqual({ fsHz: { low: 49, high: 51, rule: 'engineer', toleranceWidth: null } })
  })
})
