import type { AlertingView } from '#shared/utils/alerts'
import { alertingSchema } from '#shared/utils/alerts'

/** A product's alert rule and subscribers: read, edit, save (quality and engineers). */
export function useAlerting(product: Ref<string>) {
  const draft = ref<{ lastN: number; minYieldPct: number; enabled: boolean; subscribers: string } | null>(null)
  const error = ref<string | null>(null)
  const saved = ref(false)
  const busy = ref(false)

  async function load() {
    draft.value = null
    error.value = null
    saved.value = false
    if (!product.value) return
    try {
      const url: string = `/api/products/${encodeURIComponent(product.value)}/alerting`
      const a = await $fetch<AlertingView>(url)
      draft.value = { lastN: a.lastN, minYieldPct: a.minYieldPct, enabled: a.enabled, subscribers: a.subscribers.join('\n') }
    } catch (err) {
      error.value = apiErrorOf(err).message
    }
  }

  async function save() {
    if (!draft.value) return
    error.value = null
    saved.value = false
    const parsed = alertingSchema.safeParse({ ...draft.value, subscribers: draft.value.subscribers.split(/[\s,;]+/).filter(Boolean) })
    if (!parsed.success) {
      error.value = parsed.error.issues.map((i) => i.message).join('; ')
      return
    }
    busy.value = true
    try {
      const url: string = `/api/products/${encodeURIComponent(product.value)}/alerting`
      await $fetch(url, { method: 'PUT', body: parsed.data })
      saved.value = true
    } catch (err) {
      error.value = apiErrorOf(err).message
    } finally {
      busy.value = false
    }
  }

  watch(product, load, { immediate: true })
  return { draft, error, saved, busy, save }
}
