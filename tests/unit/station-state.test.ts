import { describe, expect, it } from 'vitest'
import { checkPlanSchema, latestShiftStart, stationState, zonedInstant, type StationStateInput } from '../../shared/utils/station-checks'

// Time-zone arithmetic checked against the tz database's published offsets (from memory: Asia/Ho_Chi_Minh is
// UTC+7 all year; Europe/Berlin is UTC+1 in winter, UTC+2 from the last Sunday of March, 01:00 UTC).
describe('shift starts in a time zone', () => {
  it('turns a local wall time into its instant', () => {
    expect(new Date(zonedInstant(2026, 11, 5, '06:00', 'Asia/Ho_Chi_Minh')).toISOString()).toBe('2026-12-04T23:00:00.000Z')
    expect(new Date(zonedInstant(2026, 0, 15, '06:00', 'Europe/Berlin')).toISOString()).toBe('2026-01-15T05:00:00.000Z')
    expect(new Date(zonedInstant(2026, 6, 15, '06:00', 'Europe/Berlin')).toISOString()).toBe('2026-07-15T04:00:00.000Z')
    // 2026-03-29 is the last Sunday of March: 06:00 is already summer time.
    expect(new Date(zonedInstant(2026, 2, 29, '06:00', 'Europe/Berlin')).toISOString()).toBe('2026-03-29T04:00:00.000Z')
  })

  it('finds the latest shift start, also the night shift of the day before', () => {
    const starts = ['06:00', '14:00', '22:00']
    expect(latestShiftStart(new Date('2026-12-05T10:00:00Z'), starts, 'UTC')!.toISOString()).toBe('2026-12-05T06:00:00.000Z')
    expect(latestShiftStart(new Date('2026-12-05T03:00:00Z'), starts, 'UTC')!.toISOString()).toBe('2026-12-04T22:00:00.000Z')
    // 05:30 local in Hanoi (22:30 UTC the day before) is still the night shift from 22:00 local.
    expect(latestShiftStart(new Date('2026-12-04T22:30:00Z'), starts, 'Asia/Ho_Chi_Minh')!.toISOString()).toBe('2026-12-04T15:00:00.000Z')
    expect(latestShiftStart(new Date('2026-12-05T10:00:00Z'), [], 'UTC')).toBeNull()
  })
})

describe('check plans', () => {
  it('take any combination, and refuse an empty plan, bad times and unknown zones', () => {
    expect(checkPlanSchema.parse({ everyUnits: 500 })).toEqual({ shiftStarts: [], timeZone: 'UTC', everyHours: null, everyUnits: 500 })
    expect(checkPlanSchema.safeParse({}).success).toBe(false)
    expect(checkPlanSchema.safeParse({ shiftStarts: ['6:00'] }).success).toBe(false)
    expect(checkPlanSchema.safeParse({ shiftStarts: ['24:00'] }).success).toBe(false)
    expect(checkPlanSchema.safeParse({ everyHours: 8, timeZone: 'Mars/Olympus' }).success).toBe(false)
  })
})

describe('a station\'s state', () => {
  const plan = { shiftStarts: ['06:00', '18:00'], timeZone: 'UTC', everyHours: 4, everyUnits: 200, since: new Date('2026-12-01T00:00:00Z') }
  const passed = { at: new Date('2026-12-05T06:30:00Z'), pass: true, failing: [], serial: 'REF-1' }
  const at = (t: string) => new Date(`2026-12-05T${t}:00Z`)
  const state = (over: Partial<StationStateInput>, now: Date) => stationState({ plan, lastCheck: passed, unitsDueAt: null, release: null, ...over }, now)

  it('is never blocked without a plan', () => {
    expect(stationState({ plan: null, lastCheck: null, unitsDueAt: null, release: null }, at('10:00'))).toMatchObject({ state: 'no_plan', blocked: false })
  })

  it('is verified after a passed check until the first of hours, shift and units falls due', () => {
    expect(state({}, at('08:00'))).toMatchObject({ state: 'verified', blocked: false, since: passed.at.toISOString(), nextDueAt: at('10:30').toISOString() })
    // Four hours after the check.
    expect(state({}, at('10:31'))).toMatchObject({ state: 'due', blocked: true, since: at('10:30').toISOString() })
    expect(state({}, at('10:31')).reason).toMatch(/every 4 h/)
    // The 200th unit came first.
    expect(state({ unitsDueAt: at('09:00') }, at('09:05'))).toMatchObject({ state: 'due', since: at('09:00').toISOString() })
    // A new shift starts (hours off).
    expect(stationState({ plan: { ...plan, everyHours: null }, lastCheck: passed, unitsDueAt: null, release: null }, at('18:01'))).toMatchObject({ state: 'due', since: at('18:00').toISOString() })
  })

  it('is due from the plan\'s start when never checked', () => {
    expect(state({ lastCheck: null }, at('08:00'))).toMatchObject({ state: 'due', blocked: true, since: plan.since.toISOString() })
  })

  it('blocks at once on a failed check, naming the figures', () => {
    const failed = { at: at('07:00'), pass: false, failing: ['Fs', 'Sensitivity'], serial: 'REF-1' }
    const s = state({ lastCheck: failed }, at('07:01'))
    expect(s).toMatchObject({ state: 'failed', blocked: true, since: failed.at.toISOString() })
    expect(s.reason).toMatch(/REF-1 failed on Fs, Sensitivity/)
  })

  it('runs while an engineer\'s release given after the block holds, and blocks again after it', () => {
    const failed = { at: at('07:00'), pass: false, failing: ['Fs'], serial: 'REF-1' }
    const release = { at: at('07:30'), until: at('09:30'), by: 'Eng', comment: 'reference unit at the lab' }
    expect(state({ lastCheck: failed, release }, at('08:00'))).toMatchObject({ state: 'released', blocked: false, nextDueAt: at('09:30').toISOString() })
    expect(state({ lastCheck: failed, release }, at('09:31'))).toMatchObject({ state: 'failed', blocked: true })
    // A release from before the block does not lift it.
    const early = { ...release, at: at('06:45') }
    expect(state({ lastCheck: failed, release: early }, at('08:00'))).toMatchObject({ blocked: true })
  })
})
