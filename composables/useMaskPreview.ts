import type { MaskPreview } from '#shared/types/api'

/** How many recent results a preview reads by default (enough for a yield to mean something, few enough to judge on request). */
export const PREVIEW_DEFAULT_LAST = 2000

/** The saved draft applied to the product's recent results, fetched on request (it reads many results). */
export function useMaskPreview(id: number) {
  const preview = shallowRef<MaskPreview | null>(null)
  const busy = ref(false)
  const error = ref<string | null>(null)

  async function run(last = PREVIEW_DEFAULT_LAST) {
    error.value = null
    busy.value = true
    try {
      const url: string = `/api/masks/${id}/preview`
      preview.value = await $fetch<MaskPreview>(url, { query: { last } })
    } catch (err) {
      error.value = apiErrorOf(err).message
    } finally {
      busy.value = false
    }
  }

  return { preview, busy, error, run, clear: () => (preview.value = null) }
}
