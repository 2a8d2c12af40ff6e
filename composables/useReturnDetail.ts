import type { ReturnComparison, ReturnView } from '#shared/types/returns'
import type { ReturnCloseInput } from '#shared/utils/returns'

const detailKey = (id: number) => `return:${id}`
const compareKey = (id: number) => `return-compare:${id}`

/** One return with its attachments and return tests. */
export function useReturnDetail(id: Ref<number>) {
  return useFetch<ReturnView>(() => `/api/returns/${id.value}`, { key: computed(() => detailKey(id.value)) })
}

/** The comparison with the factory test (delta table, readings, curves). */
export function useReturnCompare(id: Ref<number>) {
  return useFetch<ReturnComparison>(() => `/api/returns/${id.value}/compare`, { key: computed(() => compareKey(id.value)) })
}

/** Refreshes the return and its comparison after a change. */
export function refreshReturn(id: number): Promise<void> {
  return refreshNuxtData([detailKey(id), compareKey(id)])
}

/** A mutation of one return (attachment, re-test, close): busy flag, the server's message on refusal, refresh after. */
export function useReturnAction(id: Ref<number>) {
  const { busy, error, run: act } = useAction()

  /** Posts to /api/returns/:id/<path>; true when the server took it. */
  function run(path: 'attachments' | 'retest' | 'close', body: FormData | ReturnCloseInput): Promise<boolean> {
    return act(async () => {
      const url: string = `/api/returns/${id.value}/${path}`
      await $fetch(url, { method: 'POST', body })
      await refreshReturn(id.value)
    })
  }

  return { busy, error, run }
}
