import type { ApiErrorBody, RecordingSummary, ReferenceUnitView, StationCheckStatus, StationCheckView } from '#shared/types/api'
import { checkPlanSchema, stationReleaseSchema, MAX_RELEASE_HOURS, type CheckPlan } from '#shared/utils/station-checks'

export const stationCheckKey = (id: number | null) => `station-check:${id ?? 'none'}`

/**
 * One station's check plan, state and latest checks. `server: false` where the station is a
 * browser-side choice (the bench); with a null station it holds null and asks nothing.
 */
export function useStationCheck(stationId: MaybeRefOrGetter<number | null>, opts: { server?: boolean } = {}) {
  const fetcher = useRequestFetch()
  return useAsyncData(
    computed(() => stationCheckKey(toValue(stationId))),
    () => {
      const id = toValue(stationId)
      // A plain string URL: Nitro's typed-route inference overflows on template literals.
      const url: string = `/api/stations/${id}/check`
      return id === null ? Promise.resolve(null) : fetcher<StationCheckStatus>(url)
    },
    { server: opts.server ?? true, default: () => null },
  )
}

/** The plan form as typed: shift starts as one comma-separated text, numbers as text (empty = not used). */
export interface PlanDraft {
  shiftStarts: string
  timeZone: string
  everyHours: string
  everyUnits: string
}

/** The browser's own time zone, the usual choice for a plan made at the factory. */
export function localTimeZone(): string {
  try {
    return Intl.DateTimeFormat().resolvedOptions().timeZone || 'UTC'
  } catch {
    return 'UTC'
  }
}

export function planDraftOf(plan: CheckPlan | null): PlanDraft {
  if (!plan) return { shiftStarts: '', timeZone: localTimeZone(), everyHours: '', everyUnits: '' }
  return {
    shiftStarts: plan.shiftStarts.join(', '),
    timeZone: plan.timeZone,
    everyHours: plan.everyHours === null ? '' : String(plan.everyHours),
    everyUnits: plan.everyUnits === null ? '' : String(plan.everyUnits),
  }
}

/** "6:00" is read as 06:00; anything else goes to the schema as typed, so its refusal names it. */
const shiftTime = (s: string) => (/^\d:\d\d$/.test(s) ? `0${s}` : s)
/** A number as typed (a decimal comma too); empty means not used. */
const numberOrNull = (s: string) => (s.trim() === '' ? null : Number(s.trim().replace(',', '.')))

export function planOfDraft(d: PlanDraft) {
  return {
    shiftStarts: d.shiftStarts.split(/[,;\s]+/).filter(Boolean).map(shiftTime),
    timeZone: d.timeZone.trim() || 'UTC',
    everyHours: numberOrNull(d.everyHours),
    everyUnits: numberOrNull(d.everyUnits),
  }
}

/** Field → message in words. The form's own fields are the keys; '' holds what belongs to no field. */
export type PlanFieldErrors = Partial<Record<keyof PlanDraft | '', string>>

const FIELD_WORDS: Record<keyof PlanDraft, string> = {
  shiftStarts: 'Shift starts',
  timeZone: 'Time zone',
  everyHours: 'Every … hours',
  everyUnits: 'Every … production units',
}
// Zod's own words for numbers and lists read like code: these fields say what they take instead.
const OWN_WORDS: Partial<Record<keyof PlanDraft, string>> = {
  everyHours: `a number of hours above 0 (at most ${24 * 31}), or empty`,
  everyUnits: 'a whole number of units above 0, or empty',
}

/** One issue (from the schema here or a 400 answer, path with or without "plan.") to its field and words. */
function placeIssue(into: PlanFieldErrors, path: string, message: string) {
  const field = path.replace(/^plan\.?/, '').split('.')[0] as keyof PlanDraft | ''
  if (field && field in FIELD_WORDS) {
    const words = OWN_WORDS[field] ?? (field === 'shiftStarts' && !/24-hour/.test(message) ? 'at most 6 shift starts, each a 24-hour time such as 06:00' : message)
    into[field] ??= `${FIELD_WORDS[field]}: ${words}`
  } else into[''] ??= message.charAt(0).toUpperCase() + message.slice(1) + '.'
}

/** Plan and release for one station (engineers): the route's schemas check the form first; the answer replaces the shown state. */
export function useStationCheckEditor(stationId: number, onSaved: (s: StationCheckStatus) => void) {
  const busy = ref(false)
  const error = ref<string | null>(null)
  const fieldErrors = ref<PlanFieldErrors>({})

  async function send(body: Record<string, unknown>, path: 'check-plan' | 'release', method: 'PUT' | 'POST'): Promise<StationCheckStatus | null> {
    busy.value = true
    error.value = null
    try {
      const url: string = `/api/stations/${stationId}/${path}`
      const answer = await $fetch<StationCheckStatus>(url, { method, body })
      onSaved(answer)
      return answer
    } catch (err) {
      error.value = apiErrorOf(err).message
      const issues = (err as { data?: Partial<ApiErrorBody> } | null)?.data?.data?.issues ?? []
      const placed: PlanFieldErrors = {}
      for (const i of issues) placeIssue(placed, i.path, i.message)
      fieldErrors.value = placed
      if (Object.keys(placed).some((k) => k !== '')) error.value = 'Not saved: check the plan.'
      return null
    } finally {
      busy.value = false
    }
  }

  /** Saves the plan the draft describes (null removes it); answers whether it was saved. */
  async function savePlan(d: PlanDraft | null): Promise<boolean> {
    fieldErrors.value = {}
    error.value = null
    if (d) {
      const plan = planOfDraft(d)
      const checked = checkPlanSchema.safeParse(plan)
      if (!checked.success) {
        const placed: PlanFieldErrors = {}
        for (const i of checked.error.issues) placeIssue(placed, i.path.join('.'), i.message)
        fieldErrors.value = placed
        error.value = 'Not saved: check the plan.'
        return false
      }
      return (await send({ plan }, 'check-plan', 'PUT')) !== null
    }
    return (await send({ plan: null }, 'check-plan', 'PUT')) !== null
  }

  /** Releases the blocked station for `hours` with the engineer's reason; answers the new status or null. */
  async function release(comment: string, hoursText: string): Promise<StationCheckStatus | null> {
    fieldErrors.value = {}
    const checked = stationReleaseSchema.safeParse({ comment, hours: numberOrNull(hoursText) })
    if (!checked.success) {
      const issue = checked.error.issues[0]
      error.value = issue?.path[0] === 'hours' ? `Hours: a number of hours above 0, at most ${MAX_RELEASE_HOURS}.` : `Reason: ${issue?.message ?? 'say why'}.`
      return null
    }
    return send(checked.data, 'release', 'POST')
  }

  return { busy, error, fieldErrors, savePlan, release }
}

/** How often the bench re-reads its station's check state (a check can fall due by the clock). */
const BENCH_CHECK_REFRESH_MS = 30_000

/** The bench's station check state (browser only: the station is a choice kept in the browser), re-read every half minute while visible. */
export function useBenchStationCheck(stationId: Ref<number | null>) {
  const res = useStationCheck(stationId, { server: false })
  let timer: ReturnType<typeof setInterval> | undefined
  onMounted(() => {
    timer = setInterval(() => {
      if (stationId.value !== null && document.visibilityState === 'visible') void res.refresh()
    }, BENCH_CHECK_REFRESH_MS)
  })
  onBeforeUnmount(() => clearInterval(timer))
  return res
}

/** The reference units in force of a product (none asked for without a product). */
export function useBenchReferenceUnits(productCode: Ref<string | null>) {
  const fetcher = useRequestFetch()
  return useAsyncData(
    computed(() => `reference-units:${productCode.value ?? 'none'}`),
    () => (productCode.value ? fetcher<ReferenceUnitView[]>('/api/reference-units', { query: { product: productCode.value } }) : Promise.resolve([])),
    { server: false, default: () => [] as ReferenceUnitView[] },
  )
}

/** Whether a serial as typed is one of these reference units (serials compare without regard to case, as the search box does). */
export function referenceOf(serial: string, references: readonly ReferenceUnitView[]): ReferenceUnitView | null {
  const s = serial.trim().toUpperCase()
  return (s && references.find((r) => r.serial.toUpperCase() === s)) || null
}

/**
 * The station check a finished station-check recording gave: read from its station's checks (the
 * one whose recordingId is the recording's). Null while there is none to show.
 */
export function useCheckOutcome(recording: Ref<Pick<RecordingSummary, 'id' | 'status' | 'purpose' | 'stationId'> | null>) {
  const check = ref<StationCheckView | null>(null)
  const missing = ref(false)
  const error = ref<string | null>(null)
  watch(
    () => {
      const r = recording.value
      return r && r.purpose === 'station_check' && r.status === 'done' && r.stationId !== null ? `${r.stationId}:${r.id}` : null
    },
    async (which) => {
      check.value = null
      missing.value = false
      error.value = null
      if (!which) return
      const [stationId, recordingId] = which.split(':').map(Number)
      try {
        const url: string = `/api/stations/${stationId}/check`
        const status = await $fetch<StationCheckStatus>(url)
        // A newer recording replaced this one while the answer travelled: drop it.
        if (recording.value?.id !== recordingId) return
        check.value = status.checks.find((c) => c.recordingId === recordingId) ?? null
        missing.value = !check.value
      } catch (err) {
        error.value = apiErrorOf(err).message
      }
    },
    { immediate: true },
  )
  return { check, missing, error }
}
