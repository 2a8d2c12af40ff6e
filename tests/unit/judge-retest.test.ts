import { describe, expect, it } from 'vitest'
import { judge, LEVEL_RETEST_DB, type Judgeable } from '../../server/verdict/judge'
import { EVENT_MARGIN_DB } from '../../server/analysis/transient'
import { maskLimitsSchema } from '../../shared/utils/mask'

// Our rule (issue: verdicts that hold on a real line): a check passes only when its figure and its
// uncertainty lie inside the limit, fails only when they lie outside, and cannot decide otherwise;
// a recording that cannot decide ends `retest` with a reason, never `fail`.
const base: Judgeable = {
  kind: 'sweep',
  parameters: { reOhm: 6.1, re20Ohm: null, fsHz: 42, qts: 0.35, sensitivityDb: 88, thdMaxPct: 0.8, rubBuzzDb: -70, zminOhm: 6.6, effectiveImpedanceOhm: 9.5 },
  flags: { polarity: 'normal', openCoil: false, shortedCoil: false },
  curves: { freqHz: [100, 200, 500, 1000, 2000], splDb: [86, 87, 88, 88, 87], impedanceOhm: null, thdPct: [0.8, 0.5, 0.4, 0.3, 0.3] },
}
const limits = maskLimitsSchema.parse({
  scalars: { sensitivityDb: { low: 86.5, high: 89.5 }, thdMaxPct: { low: null, high: 3 }, rubBuzzDb: { low: null, high: -50 } },
  curves: { splDb: { freqHz: [100, 2000], low: [83, 84], high: [90, 91] } },
  thdBandHz: [100, 2000],
})
const withParams = (p: Partial<Judgeable['parameters']>, curves: Partial<Judgeable['curves']> = {}): Judgeable => ({
  ...base,
  parameters: { ...base.parameters, ...p },
  curves: { ...base.curves, ...curves },
})
const check = (r: Judgeable, name: string) => judge(r, limits, 8).checks.find((c) => c.name === name)!

describe('a figure with its uncertainty against a limit', () => {
  it('passes inside, fails outside, and cannot decide when the uncertainty straddles the limit', () => {
    expect(judge(withParams({ sensitivityUncertaintyDb: 0.2 }), limits, 8).verdict).toBe('pass')
    const out = judge(withParams({ sensitivityDb: 85, sensitivityUncertaintyDb: 0.5 }), limits, 8)
    expect(out.verdict).toBe('fail')
    const straddle = judge(withParams({ sensitivityDb: 86.3, sensitivityUncertaintyDb: 0.5 }), limits, 8)
    expect(straddle.verdict).toBe('retest')
    expect(straddle.retestReason).toBe('noise')
    expect(straddle.checks.find((c) => c.name === 'sensitivityDb')).toMatchObject({ pass: false, undecided: true, uncertainty: 0.5 })
  })

  it('names hum as the reason when the recording carried hum', () => {
    const r = withParams({ sensitivityDb: 86.3, sensitivityUncertaintyDb: 0.5, disturbances: [{ code: 'hum', note: 'hum', retest: false }] })
    expect(judge(r, limits, 8).retestReason).toBe('hum')
  })

  it('reads a response point by point with its uncertainty', () => {
    // 500 Hz reads 84.2 dB against a low limit of about 83.5 dB: inside alone, straddling with ±1 dB.
    const splDb = [86, 87, 84.2, 88, 87]
    expect(check(withParams({}, { splDb }), 'splDb')).toMatchObject({ pass: true })
    const u = judge(withParams({ splUncertaintyDb: [0.1, 0.1, 1, 0.1, 0.1] }, { splDb }), limits, 8)
    // The check names the point and its uncertainty: inside there (excess 0), ± 1 dB reaching over the limit.
    expect(u.checks.find((c) => c.name === 'splDb')).toMatchObject({ pass: false, undecided: true, value: 0, atHz: 500, uncertainty: 1 })
    expect(u.verdict).toBe('retest')
    // Outside by more than its uncertainty anywhere decides a fail, whatever straddles elsewhere.
    const out = judge(withParams({ splUncertaintyDb: [0.1, 0.1, 1, 0.1, 0.1] }, { splDb: [80, 87, 84.2, 88, 87] }), limits, 8)
    expect(out.verdict).toBe('fail')
  })
})

describe('THD against its noise floor', () => {
  it('passes points below a floor that lies under the limit, and cannot decide when the floor is above it', () => {
    const quiet = withParams({ thdFloorPct: [0.3, 0.3, 0.3, 0.3, 0.3] }, { thdPct: [0.8, null, null, null, null] })
    expect(check(quiet, 'thdMaxPct')).toMatchObject({ value: 0.8, pass: true })
    const loud = withParams({ thdFloorPct: [0.3, 5, 0.3, 0.3, 0.3] }, { thdPct: [0.8, null, null, null, null] })
    // The check shows why: the floor over the limit, where it lies ("below 5 at 200 Hz"), not the reading that passed.
    expect(check(loud, 'thdMaxPct')).toMatchObject({ pass: false, undecided: true, value: 5, below: true, atHz: 200 })
    expect(judge(loud, limits, 8).verdict).toBe('retest')
  })

  it('reports "below" the floor when no point stands clear of the noise', () => {
    const r = withParams({ thdFloorPct: [0.5, 0.4, 0.4, 0.4, 0.4] }, { thdPct: [null, null, null, null, null] })
    expect(check(r, 'thdMaxPct')).toMatchObject({ value: 0.5, below: true, pass: true })
  })

  it('fails a reading clear of the noise and above the limit by more than its uncertainty', () => {
    const r = withParams({ thdFloorPct: [0.3, 0.3, 0.3, 0.3, 0.3] }, { thdPct: [8, 0.5, 0.4, 0.3, 0.3] })
    expect(judge(r, limits, 8).verdict).toBe('fail')
  })

  it('cannot decide a failing point inside the part of the sweep a knock disturbed', () => {
    const knock = { code: 'transient' as const, note: 'knock', retest: false, fromHz: 150, toHz: 300 }
    const r = withParams({ thdFloorPct: [0.3, 0.3, 0.3, 0.3, 0.3], disturbances: [knock] }, { thdPct: [0.8, 9, 0.4, 0.3, 0.3] })
    const j = judge(r, limits, 8)
    expect(j.verdict).toBe('retest')
    expect(j.retestReason).toBe('transient')
  })
})

describe('rub and buzz against its residual floor', () => {
  it("reports a level within the margin of the floor as the noise's peak: the buzz is at most that", () => {
    const floor = -80
    expect(check(withParams({ rubBuzzDb: floor + EVENT_MARGIN_DB - 1, rubBuzzFloorDb: floor }), 'rubBuzzDb')).toMatchObject({ value: floor + EVENT_MARGIN_DB - 1, below: true, pass: true })
    expect(check(withParams({ rubBuzzDb: floor + EVENT_MARGIN_DB + 6, rubBuzzFloorDb: floor }), 'rubBuzzDb')).toMatchObject({ pass: true, uncertainty: expect.any(Number) })
  })

  it('cannot decide when the floor itself reaches the limit (a noisy hall), and fails a clear buzz', () => {
    const noisy = judge(withParams({ rubBuzzDb: -49, rubBuzzFloorDb: -55 }), limits, 8)
    expect(noisy.verdict).toBe('retest')
    expect(noisy.retestReason).toBe('noise')
    expect(judge(withParams({ rubBuzzDb: -30, rubBuzzFloorDb: -80 }), limits, 8).verdict).toBe('fail')
  })

  it('ends retest for a knock loud enough to read as rub and buzz, yet fails a unit with a real fault and a knock', () => {
    const knock = { code: 'transient' as const, note: 'knock', retest: true, atS: 0.3, fromHz: 60, toHz: 180 }
    const j = judge(withParams({ disturbances: [knock] }), limits, 8)
    expect(j).toMatchObject({ verdict: 'retest', retestReason: 'transient' })
    expect(judge(withParams({ disturbances: [knock], sensitivityDb: 83 }), limits, 8).verdict).toBe('fail')
    expect(judge({ ...withParams({ disturbances: [knock] }), flags: { ...base.flags, polarity: 'inverted' } }, { ...limits, polarityNormal: true }, 8).verdict).toBe('fail')
  })
})

describe('the played level against the profile', () => {
  it('warns from 1 dB, and cannot decide beyond its limit even with failing checks', () => {
    const warned = judge(withParams({ levelOffsetDb: 2 }), limits, 8)
    expect(warned.verdict).toBe('pass')
    expect(warned.warnings.join(' ')).toMatch(/2\.0 dB above/)
    // A doubling of the level (6.02 dB) is still decided.
    expect(judge(withParams({ levelOffsetDb: 6.02 }), limits, 8).verdict).toBe('pass')
    const off = judge(withParams({ levelOffsetDb: -(LEVEL_RETEST_DB + 1), sensitivityDb: 83 }), limits, 8)
    expect(off).toMatchObject({ verdict: 'retest', retestReason: 'level' })
  })

  it('still fails a unit fault whatever the level', () => {
    const r = { ...withParams({ levelOffsetDb: 10 }), flags: { ...base.flags, openCoil: true } }
    expect(judge(r, limits, 8)).toMatchObject({ verdict: 'fail', retestReason: null })
  })
})

describe('a station fault', () => {
  it('ends retest for a dead probe whatever the checks say', () => {
    const probe = { code: 'probe_fault' as const, note: 'microphone', retest: true }
    const j = judge(withParams({ disturbances: [probe], sensitivityDb: null, thdMaxPct: null, rubBuzzDb: null }, { splDb: null, thdPct: null }), limits, 8)
    expect(j).toMatchObject({ verdict: 'retest', retestReason: 'probe_fault' })
  })
})
