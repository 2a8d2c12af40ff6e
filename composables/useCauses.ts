/** The likely-causes table (trade knowledge, editable by engineers). */
export function useCauses() {
  return useFetch('/api/causes', { key: 'causes', default: () => [] })
}

/** Saves one failure class's causes, then refreshes the table. */
export function useCauseEditor() {
  const { busy, error, run } = useAction()
  const saved = ref<string | null>(null)

  function save(failureClass: string, label: string, causes: string[]): Promise<boolean> {
    saved.value = null
    return run(async () => {
      const url: string = `/api/causes/${encodeURIComponent(failureClass)}`
      await $fetch(url, { method: 'PUT', body: { label, causes } })
      // Saved is saved: say so at once, then bring the table up to date.
      saved.value = failureClass
      await refreshNuxtData('causes')
    })
  }

  return { busy, error, saved, save }
}
