import type { ReturnView } from '#shared/types/returns'
import type { ReturnCreateInput } from '#shared/utils/returns'

export type ReturnListFilter = 'open' | 'closed' | 'all'

/** The returns desk's list, by status (one cache entry per filter). */
export function useReturnList(status: Ref<ReturnListFilter>, serial?: Ref<string>) {
  const query = computed(() => ({ status: status.value, ...(serial?.value ? { serial: serial.value } : {}) }))
  return useFetch('/api/returns', {
    query,
    key: computed(() => `returns:${status.value}:${serial?.value ?? ''}`),
    default: () => [],
  })
}

/** Complaint categories: the active ones for the register form, every one for the admins' editor. */
export function useReturnCategories(all = false) {
  return useFetch('/api/return-categories', { query: all ? { all: '1' } : {}, key: `return-categories:${all ? 'all' : 'active'}`, default: () => [] })
}

/** Registers a return; the server's message comes back as the error when it refuses. */
export function useReturnRegister() {
  const { busy, error, run } = useAction()

  async function register(input: ReturnCreateInput): Promise<ReturnView | null> {
    let created: ReturnView | null = null
    await run(async () => {
      // Typed by hand: inferring a POST route's type inside a callback can exceed TypeScript's depth limit.
      created = await $fetch<ReturnView>('/api/returns', { method: 'POST', body: input })
    })
    return created
  }

  return { busy, error, register }
}
