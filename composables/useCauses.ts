import type { LikelyCause } from '#shared/types/reports'

/** The likely-causes table (trade knowledge, editable by engineers). */
export function useCauses() {
  return useFetch<LikelyCause[]>('/api/causes', { key: 'causes', default: () => [] })
}

/** Saves one failure class's causes, then refreshes the table. */
export function useCauseEditor() {
  const busy = ref(false)
  const error = ref<string | null>(null)
  const saved = ref<string | null>(null)

  async function save(failureClass: string, label: string, causes: string[]): Promise<boolean> {
    busy.value = true
    error.value = null
    saved.value = null
    try {
      const url: string = `/api/causes/${encodeURIComponent(failureClass)}`
      await $fetch(url, { method: 'PUT', body: { label, causes } })
      // Saved is saved: say so at once, then bring the table up to date.
      saved.value = failureClass
      await refreshNuxtData('causes')
      return true
    } catch (err) {
      error.value = apiErrorOf(err).message
      return false
    } finally {
      busy.value = false
    }
  }

  return { busy, error, saved, save }
}
