import { z } from 'zod'
import { plainText } from './input'

/**
 * When a station must be checked with a reference unit. Any combination of: at the start of each
 * shift (local "HH:MM" times in the plan's IANA time zone), every N hours, every N production units.
 * A station without a plan is never blocked.
 */
export interface CheckPlan {
  shiftStarts: string[]
  timeZone: string
  everyHours: number | null
  everyUnits: number | null
}

const HHMM = /^([01]\d|2[0-3]):[0-5]\d$/

function isTimeZone(tz: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: tz })
    return true
  } catch {
    return false
  }
}

export const checkPlanSchema = z
  .object({
    shiftStarts: z.array(z.string().regex(HHMM, 'a shift start is a 24-hour time such as 06:00')).max(6).default([]),
    timeZone: z.string().max(64).refine(isTimeZone, 'not a time zone this server knows (e.g. Asia/Ho_Chi_Minh, UTC)').default('UTC'),
    everyHours: z.number().positive().max(24 * 31).nullable().default(null),
    everyUnits: z.number().int().positive().max(1_000_000).nullable().default(null),
  })
  .refine((p) => p.shiftStarts.length || p.everyHours !== null || p.everyUnits !== null, {
    message: 'a plan needs shift starts, hours or units (remove the plan to stop checking)',
  })

/** An engineer's release of a blocked station, until a stated time (at most a week: a release is no substitute for a check). */
export const MAX_RELEASE_HOURS = 168
export const stationReleaseSchema = z.object({
  comment: plainText().trim().min(1, 'say why the station may run unchecked').max(500),
  hours: z.number().positive().max(MAX_RELEASE_HOURS),
})

/** Offset of a time zone from UTC at an instant, in ms (local − UTC). */
function zoneOffsetMs(at: number, timeZone: string): number {
  const parts = new Intl.DateTimeFormat('en-US', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', second: '2-digit' }).formatToParts(new Date(at))
  const get = (type: string) => Number(parts.find((p) => p.type === type)!.value)
  const local = Date.UTC(get('year'), get('month') - 1, get('day'), get('hour'), get('minute'), get('second'))
  return local - Math.floor(at / 1000) * 1000
}

/** The instant of a local wall time (y, m, d, hh:mm) in a time zone. */
export function zonedInstant(y: number, m: number, d: number, hhmm: string, timeZone: string): number {
  const [hh, mm] = hhmm.split(':').map(Number) as [number, number]
  const wall = Date.UTC(y, m, d, hh, mm)
  // Two passes settle the offset, also across a daylight-saving change.
  let at = wall - zoneOffsetMs(wall, timeZone)
  at = wall - zoneOffsetMs(at, timeZone)
  return at
}

/** The latest shift start at or before `now` (null without shift starts). */
export function latestShiftStart(now: Date, shiftStarts: readonly string[], timeZone: string): Date | null {
  if (!shiftStarts.length) return null
  const local = new Date(now.getTime() + zoneOffsetMs(now.getTime(), timeZone))
  let best: number | null = null
  for (let back = 0; back <= 2; back++) {
    const day = new Date(Date.UTC(local.getUTCFullYear(), local.getUTCMonth(), local.getUTCDate() - back))
    for (const s of shiftStarts) {
      const at = zonedInstant(day.getUTCFullYear(), day.getUTCMonth(), day.getUTCDate(), s, timeZone)
      if (at <= now.getTime() && (best === null || at > best)) best = at
    }
    if (best !== null) break
  }
  return best === null ? null : new Date(best)
}

export type StationCheckState = 'no_plan' | 'verified' | 'due' | 'failed' | 'released'

export interface StationStateInput {
  plan: (CheckPlan & { since: Date }) | null
  /** The station's latest check. */
  lastCheck: { at: Date; pass: boolean; failing: string[]; serial: string } | null
  /** When the station's Nth production upload after its last passed check was (null: not that many yet). */
  unitsDueAt: Date | null
  /** The latest release by an engineer. */
  release: { at: Date; until: Date; by: string | null; comment: string } | null
}

export interface StationState {
  state: StationCheckState
  /** Whether uploads are refused (423 station_unverified). */
  blocked: boolean
  /** Since when the state holds (the check that failed, the moment the check fell due). */
  since: string | null
  /** What the state means, in words, with what to do. */
  reason: string
  /** When the station next falls due (a passed check with hours or shifts in its plan). */
  nextDueAt: string | null
}

const iso = (d: Date | null) => (d ? d.toISOString() : null)

/** The next shift start after `after` (looking a few days ahead). */
function nextShiftStart(after: Date, shiftStarts: readonly string[], timeZone: string): Date | null {
  if (!shiftStarts.length) return null
  for (let h = 1; h <= 24 * 3; h++) {
    const probe = new Date(after.getTime() + h * 3_600_000)
    const s = latestShiftStart(probe, shiftStarts, timeZone)
    if (s && s > after) return s
  }
  return null
}

/**
 * Whether a station may measure production now, by its plan, its latest check and the engineers'
 * releases. A failed check blocks at once; a due check blocks from the moment it fell due; an
 * engineer's release given after the block holds until its time.
 */
export function stationState(s: StationStateInput, now: Date): StationState {
  const { plan, lastCheck, release } = s
  if (!plan) return { state: 'no_plan', blocked: false, since: null, reason: 'No check plan: the station is never blocked.', nextDueAt: null }
  let blockedSince: Date | null = null
  let reason = ''
  if (lastCheck && !lastCheck.pass) {
    blockedSince = lastCheck.at
    reason = `The station check with reference unit ${lastCheck.serial} failed on ${lastCheck.failing.join(', ') || 'a figure it could not measure'}. Find and fix the cause, then check the station again.`
  } else {
    const passedAt = lastCheck?.at ?? null
    const due: { at: Date; why: string }[] = []
    if (!passedAt) due.push({ at: plan.since, why: 'it has not been checked since its check plan was set' })
    else {
      if (plan.everyHours !== null) due.push({ at: new Date(passedAt.getTime() + plan.everyHours * 3_600_000), why: `its check every ${plan.everyHours} h fell due` })
      const shift = latestShiftStart(now, plan.shiftStarts, plan.timeZone)
      if (shift && shift > passedAt) due.push({ at: shift, why: 'a new shift started' })
      if (s.unitsDueAt) due.push({ at: s.unitsDueAt, why: `it measured ${plan.everyUnits} units since its last check` })
    }
    const fell = due.filter((d) => d.at <= now).sort((a, b) => a.at.getTime() - b.at.getTime())[0]
    if (!fell) {
      const next = [
        passedAt && plan.everyHours !== null ? new Date(passedAt.getTime() + plan.everyHours * 3_600_000) : null,
        passedAt ? nextShiftStart(now, plan.shiftStarts, plan.timeZone) : null,
      ].filter((d): d is Date => d !== null).sort((a, b) => a.getTime() - b.getTime())[0] ?? null
      return { state: 'verified', blocked: false, since: iso(passedAt), reason: 'Checked and within its verification limits.', nextDueAt: iso(next) }
    }
    blockedSince = fell.at
    reason = `A station check is due: ${fell.why}. Measure the product's reference unit on this station.`
  }
  if (release && release.at >= blockedSince && release.until > now) {
    return {
      state: 'released',
      blocked: false,
      since: iso(release.at),
      reason: `Released by ${release.by ?? 'an engineer'} until ${release.until.toISOString()}: ${release.comment}. ${reason}`,
      nextDueAt: iso(release.until),
    }
  }
  return { state: lastCheck && !lastCheck.pass ? 'failed' : 'due', blocked: true, since: iso(blockedSince), reason, nextDueAt: null }
}
