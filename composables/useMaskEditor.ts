import type { CurveLimit, MaskTransition, MaskView } from '#shared/types/api'
import { maskLimitsSchema, maskReleaseSchema, maskRetireSchema } from '#shared/utils/mask'

export type MaskLimitsDraft = MaskView['limits']

/** A release the server held back: the draft's expected false-reject share is above the product's threshold. */
export interface ReleaseRiskNotice {
  message: string
  falseRejectPct: number | null
  thresholdPct: number | null
  basis: 'known_good' | 'golden_model' | null
}

/** The held-back release in a 409 `false_reject_unconfirmed` answer, or null for any other failure. */
export function releaseRiskOf(err: unknown): ReleaseRiskNotice | null {
  const info = apiErrorOf(err)
  if (info.code !== 'false_reject_unconfirmed') return null
  const d = (err as { data?: { data?: Record<string, unknown> } }).data?.data ?? {}
  const num = (v: unknown) => (typeof v === 'number' && Number.isFinite(v) ? v : null)
  const basis = d.basis === 'known_good' || d.basis === 'golden_model' ? d.basis : null
  return { message: info.message, falseRejectPct: num(d.falseRejectPct), thresholdPct: num(d.thresholdPct), basis }
}

const clone = <T>(v: T): T => JSON.parse(JSON.stringify(v)) as T

/** The first problem of a breakpoint table, or null: frequencies must be positive and rising. */
export function breakpointProblem(name: string, c: CurveLimit | undefined): string | null {
  if (!c) return null
  if (c.freqHz.length < 2) return `${name}: keep at least two breakpoints`
  for (let i = 0; i < c.freqHz.length; i++) {
    const f = c.freqHz[i]!
    if (!(f > 0)) return `${name}: breakpoint ${i + 1} needs a frequency above 0 Hz`
    if (i > 0 && !(f > c.freqHz[i - 1]!)) return `${name}: frequencies must rise from row to row (row ${i + 1})`
    const lo = c.low[i]
    const hi = c.high[i]
    if (lo != null && hi != null && lo > hi) return `${name}: low above high at ${f} Hz`
  }
  return null
}

/**
 * One mask on its page: the saved mask, a local copy of its limits that the tables edit (the chart
 * follows it at once), and the actions of each state: save a draft, release it, retire a release.
 */
export async function useMaskEditor(id: number) {
  const url: string = `/api/masks/${id}`
  const key = `mask-${id}`
  const res = await useFetch<MaskView>(url, { key })
  const limits = ref<MaskLimitsDraft | null>(null)
  const { busy, error, run: act } = useAction()
  const notice = ref<string | null>(null)
  const releaseRisk = ref<ReleaseRiskNotice | null>(null)

  watch(res.data, (m) => (limits.value = m ? clone(m.limits) : null), { immediate: true })
  const editable = computed(() => res.data.value?.status === 'draft')
  const dirty = computed(() => !!res.data.value && !!limits.value && JSON.stringify(limits.value) !== JSON.stringify(res.data.value.limits))

  function run(fn: () => Promise<unknown>): Promise<boolean> {
    notice.value = null
    // A held-back release's figure was for the draft as it was: any new action asks afresh.
    releaseRisk.value = null
    return act(async () => {
      await fn()
      // The overview and the products' active mask change with every state change.
      await Promise.all([res.refresh(), refreshNuxtData(['masks', 'mask-products'])])
    })
  }

  function validLimits() {
    const l = limits.value
    const problem = l && (breakpointProblem('Response', l.curves.splDb) ?? breakpointProblem('Impedance', l.curves.impedanceOhm))
    if (problem) return { problem }
    const parsed = maskLimitsSchema.safeParse(l)
    if (!parsed.success) return { problem: parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ') }
    return { limits: parsed.data }
  }

  async function save(): Promise<boolean> {
    const v = validLimits()
    if (v.problem) {
      error.value = v.problem
      return false
    }
    const ok = await run(() => $fetch<MaskView>(url, { method: 'PATCH', body: { limits: v.limits } }))
    if (ok) notice.value = 'Draft saved.'
    return ok
  }

  function discard() {
    if (res.data.value) limits.value = clone(res.data.value.limits)
  }

  /** Releases the saved draft; a share over the product's threshold is held back (releaseRisk) until sent again confirmed. */
  async function release(comment: string, confirmFalseReject = false): Promise<boolean> {
    const parsed = maskReleaseSchema.safeParse({ comment, confirmFalseReject: confirmFalseReject || undefined })
    if (!parsed.success) {
      error.value = parsed.error.issues[0]?.message ?? 'Say why this mask is released.'
      return false
    }
    const releaseUrl: string = `${url}/release`
    let judged = 0
    let held = false
    const ok = await run(async () => {
      try {
        const r = await $fetch<MaskTransition>(releaseUrl, { method: 'POST', body: parsed.data })
        judged = r.judgedUnjudged ?? 0
      } catch (err) {
        releaseRisk.value = releaseRiskOf(err)
        if (!releaseRisk.value) throw err
        held = true
      }
    })
    if (held) return false
    if (ok) notice.value = `Released. ${judged} result${judged === 1 ? '' : 's'} that had no verdict ${judged === 1 ? 'was' : 'were'} judged by it.`
    return ok
  }

  async function retire(comment: string): Promise<boolean> {
    const body = maskRetireSchema.parse({ comment: comment.trim() || undefined })
    const retireUrl: string = `${url}/retire`
    const ok = await run(() => $fetch<{ id: number; status: string }>(retireUrl, { method: 'POST', body }))
    if (ok) notice.value = 'Retired. New results of this product stay unjudged until another version is released.'
    return ok
  }

  return { mask: res.data, fetchError: res.error, limits, editable, dirty, busy, error, notice, releaseRisk, save, discard, release, retire }
}
