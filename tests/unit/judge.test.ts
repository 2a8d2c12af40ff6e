import { describe, expect, it } from 'vitest'
import { canMeasure, failedCheckNames, judge, onlyUndecided, type Judgeable } from '../../server/verdict/judge'
import { maskOpinion } from '../../server/services/current-mask'
import { figureValue, maskLimitsSchema } from '../../shared/utils/mask'

// A hand-made result: every figure written out, a THD curve with its peak at 200 Hz.
const result: Judgeable = {
  kind: 'sweep',
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
    const table: Judgeable = { ...result, kind: 'impedance_table', parameters: { ...result.parameters, sensitivityDb: null, thdMaxPct: null, rubBuzzDb: null }, flags: { polarity: null, openCoil: false, shortedCoil: false }, curves: { freqHz: result.curves.freqHz, splDb: null, impedanceOhm: null } }
    const j = judge(table, limits, 8)
    expect(j.unmeasured.sort()).toEqual(['polarity', 'splDb', 'thdMaxPct'])
    expect(j.undecided).toEqual([])
    expect(j.verdict).toBe('pass')
  })
})

// A check that could not be measured is never a pass (our rule: a result passes only when every
// check its kind of file can measure was measured and passed).
describe('checks a file could not measure', () => {
  const limits = maskLimitsSchema.parse({ scalars: { re20Ohm: { low: 5.5, high: 6.5 }, fsHz: { low: 38, high: 46 }, qts: { low: 0.3, high: 0.4 } } })
  const table = (over: Partial<Judgeable['parameters']>, flags: Partial<Judgeable['flags']> = {}): Judgeable => ({
    kind: 'impedance_table',
    parameters: { ...result.parameters, sensitivityDb: null, thdMaxPct: null, rubBuzzDb: null, effectiveImpedanceOhm: null, ...over },
    flags: { polarity: null, openCoil: false, shortedCoil: false, ...flags },
    curves: { freqHz: result.curves.freqHz, splDb: null, impedanceOhm: null },
  })

  it('never passes a table that measured nothing: each missing figure a check without a value that cannot decide', () => {
    const j = judge(table({ reOhm: null, fsHz: null, qts: null, zminOhm: null }), limits, 8)
    expect(j.verdict).toBe('retest')
    expect(j.retestReason).toBe('undecided')
    expect(j.undecided).toEqual(['ratedImpedance', 're20Ohm', 'fsHz', 'qts'])
    expect(j.checks.filter((c) => !c.pass)).toEqual(j.undecided.map((name) => expect.objectContaining({ name, value: null, pass: false, undecided: true })))
    expect(onlyUndecided(j)).toBe(true)
  })

  it('fails a table without a resonance on its own check, a unit fault rather than a measurement to repeat', () => {
    const j = judge(table({ fsHz: null, qts: null, zminOhm: null }, { noResonance: true }), limits, 8)
    expect(failedCheckNames(j)).toEqual(['resonance'])
    expect(onlyUndecided(j)).toBe(false)
  })

  it('fails a shorted or open table on the coil check alone: the fault explains the missing figures', () => {
    const shorted = judge(table({ reOhm: null, fsHz: null, qts: null, zminOhm: null }, { shortedCoil: true }), limits, 8)
    expect(failedCheckNames(shorted)).toEqual(['coil'])
    expect(shorted.undecided).toEqual([])
    expect(shorted.unmeasured).toEqual(expect.arrayContaining(['ratedImpedance', 'fsHz', 'qts']))
    expect(failedCheckNames(judge(table({ reOhm: null, fsHz: null, qts: null, zminOhm: null }, { openCoil: true }), limits, 8))).toEqual(['coil'])
  })

  it('sends a sweep that could not read Fs to a retest, but not for what a channel it lacks cannot show', () => {
    const j = judge({ ...result, parameters: { ...result.parameters, fsHz: null } }, limits, 8)
    expect(j.undecided).toEqual(['fsHz'])
    expect(j.verdict).toBe('retest')
    expect(j.retestReason).toBe('undecided')
    // A station with a microphone and no current channel: the electrical checks are not its to give.
    const micOnly: Judgeable = { ...result, parameters: { ...result.parameters, reOhm: null, fsHz: null, qts: null, zminOhm: null, peakDbfs: { mic: -12, drive: null, sense: null } } }
    expect(canMeasure(micOnly, 'fsHz')).toBe(false)
    expect(canMeasure(micOnly, 'polarity')).toBe(true)
    const m = judge(micOnly, limits, 8)
    expect(m.undecided).toEqual([])
    expect(m.unmeasured).toEqual(['coil', 'ratedImpedance', 're20Ohm', 'fsHz', 'qts'])
    expect(m.verdict).toBe('pass')
  })
})

describe('what the current mask says of stored results', () => {
  const v1 = maskLimitsSchema.parse({ scalars: { fsHz: { low: 38, high: 46 } } })
  // A later mask tightens Fs and THD: the same stored result now fails both.
  const v2 = maskLimitsSchema.parse({ scalars: { fsHz: { low: 30, high: 40 }, thdMaxPct: { low: null, high: 1 } } })

  it('names the failed checks in the order the judge applied them', () => {
    expect(failedCheckNames(judge(result, v1, 8))).toEqual([])
    expect(failedCheckNames(judge(result, v2, 8))).toEqual(['fsHz', 'thdMaxPct'])
    // The fixed rule fails first when the rated impedance is too high for the measured minimum.
    expect(failedCheckNames(judge(result, v2, 10))).toEqual(['ratedImpedance', 'fsHz', 'thdMaxPct'])
  })

  it('re-judges each result with the given mask, keyed by recording, and leaves the input as it was', () => {
    const stored = [
      { ...result, recordingId: 11 },
      { ...result, recordingId: 12, parameters: { ...result.parameters, fsHz: 39, thdMaxPct: 0.5 } },
    ]
    const before = structuredClone(stored)
    expect(maskOpinion({ version: 2, limits: v2 }, 8, stored)).toEqual({
      version: 2,
      results: [
        { recordingId: 11, verdict: 'fail', failedChecks: ['fsHz', 'thdMaxPct'] },
        { recordingId: 12, verdict: 'pass', failedChecks: [] },
      ],
    })
    expect(maskOpinion({ version: 1, limits: v1 }, 8, stored).results.map((r) => r.verdict)).toEqual(['pass', 'pass'])
    expect(stored).toEqual(before)
  })

  it('answers an empty list for a unit without results', () => {
    expect(maskOpinion({ version: 3, limits: v1 }, 8, [])).toEqual({ version: 3, results: [] })
  })
})
