import { describe, expect, it } from 'vitest'
import { judge, type Judgeable } from '../../server/verdict/judge'
import { figureValue, maskLimitsSchema } from '../../shared/utils/mask'

// A hand-made result: every figure written out, a THD curve with its peak at 200 Hz.
const result: Judgeable = {
  parameters: { reOhm: 6.1, re20Ohm: null, fsHz: 42, qts: 0.35, sensitivityDb: 88, thdMaxPct: 2.5, rubBuzzDb: -60, zminOhm: 6.6, effectiveImpedanceOhm: 9.5 },
  flags: { polarity: 'normal', openCoil: false, shortedCoil: false },
  curves: { freqHz: [100, 200, 500, 1000, 2000], splDb: [80, 85, 88, 88, 87], impedanceOhm: null, thdPct: [1.0, 2.5, 0.6, 0.4, 0.5] },
}

describe('figureValue', () => {
  it('reads the raw Re when it cannot be referred to 20 °C', () => {
    expect(figureValue(result, 're20Ohm')).toBe(6.1)
  })
  it('takes the THD maximum inside a band from the THD curve, the whole-band figure without one', () => {
    expect(figureValue(result, 'thdMaxPct')).toBe(2.5)
    expect(figureValue(result, 'thdMaxPct', [300, 3000])).toBe(0.6)
    expect(figureValue(result, 'thdMaxPct', [3000, 5000])).toBeNull()
  })
})

describe('judge', () => {
  const limits = maskLimitsSchema.parse({
    scalars: { fsHz: { low: 38, high: 46 }, thdMaxPct: { low: null, high: 1 } },
    curves: { splDb: { freqHz: [100, 2000], low: [78, 84], high: [90, 92] } },
  })

  it('fails THD over the whole band, passes it when the mask reads it from 300 Hz up', () => {
    expect(judge(result, limits, 8).checks.find((c) => c.name === 'thdMaxPct')).toMatchObject({ value: 2.5, pass: false })
    const banded = judge(result, { ...limits, thdBandHz: [300, 3000] }, 8)
    expect(banded.checks.find((c) => c.name === 'thdMaxPct')).toMatchObject({ value: 0.6, pass: true })
    expect(banded.verdict).toBe('pass')
  })

  it('applies the rated-impedance rule of IEC 60268-5 always: 6.6 Ω passes for 8 Ω (6.4 Ω), fails for 10 Ω (8 Ω)', () => {
    expect(judge(result, limits, 8).checks.find((c) => c.name === 'ratedImpedance')).toMatchObject({ low: 6.4, pass: true })
    expect(judge(result, limits, 10).checks.find((c) => c.name === 'ratedImpedance')).toMatchObject({ low: 8, pass: false })
  })

  it('measures the response against the mask by log-frequency interpolation between breakpoints', () => {
    const c = judge(result, limits, 8).checks.find((x) => x.name === 'splDb')!
    expect(c.pass).toBe(true)
    const low = { ...limits, curves: { splDb: { freqHz: [100, 2000], low: [79, 89], high: [90, 92] } } }
    // Hand calculation: low(f) = 79 + 10·log(f/100)/log(20); 1 kHz: 86.69 dB (88 passes); 2 kHz: 89 dB against 87: 2 dB outside.
    const failed = judge(result, low, 8).checks.find((x) => x.name === 'splDb')!
    expect(failed).toMatchObject({ pass: false, value: 2, atHz: 2000 })
  })

  it('refuses to switch the fixed rated-impedance rule off', () => {
    expect(() => maskLimitsSchema.parse({ ratedImpedanceRule: false })).toThrow(/fixed check/)
  })

  it('lists as unmeasured the checks an impedance table cannot show', () => {
    const table: Judgeable = { ...result, parameters: { ...result.parameters, sensitivityDb: null, thdMaxPct: null, rubBuzzDb: null }, flags: { polarity: null, openCoil: false, shortedCoil: false }, curves: { freqHz: result.curves.freqHz, splDb: null, impedanceOhm: null } }
    const j = judge(table, limits, 8)
    expect(j.unmeasured.sort()).toEqual(['polarity', 'splDb', 'thdMaxPct'])
    expect(j.verdict).toBe('pass')
  })
})
