import type { ReturnComparison, ReturnView } from '#shared/types/returns'
import { roleAllows } from '#shared/utils/roles'
import type { ReturnCloseInput } from '#shared/utils/returns'

const detailKey = (id: number) => `return:${id}`
const compareKey = (id: number) => `return-compare:${id}`

/** One return with its attachments and return tests (nothing is asked for id 0: no such return). */
export function useReturnDetail(id: Ref<number>) {
  return useFetch<ReturnView>(() => `/api/returns/${id.value}`, { key: computed(() => detailKey(id.value)), immediate: id.value > 0 })
}

/** The comparison with the factory test (delta table, readings, curves). */
export function useReturnCompare(id: Ref<number>) {
  return useFetch<ReturnComparison>(() => `/api/returns/${id.value}/compare`, { key: computed(() => compareKey(id.value)), immediate: id.value > 0 })
}

/** Refreshes the return and its comparison after a change. */
export function refreshReturn(id: number): Promise<void> {
  return refreshNuxtData([detailKey(id), compareKey(id)])
}

/** A mutation of one return (attachment, re-test, close): busy flag, the server's message on refusal, refresh after. */
export function useReturnAction(id: Ref<number>) {
  const { busy, error, run: act } = useAction()

  /** What the server answered to the last post that it took (e.g. a re-test's recording and whether it was a duplicate). */
  const answer = ref<unknown>(null)

  /** Posts to /api/returns/:id/<path>; true when the server took it. */
  function run(path: 'attachments' | 'retest' | 'close', body: FormData | ReturnCloseInput): Promise<boolean> {
    answer.value = null
    return act(async () => {
      const url: string = `/api/returns/${id.value}/${path}`
      answer.value = await $fetch(url, { method: 'POST', body })
      await refreshReturn(id.value)
    })
  }

  return { busy, error, answer, run }
}

/** Roles that register, re-test, attach to and close returns (admins pass every rule); engineers only read. */
const RETURN_WRITE_ROLES = ['support', 'quality'] as const

/** Whether the signed-in person may change returns (the forms show), or only read them. */
export function useReturnMayWrite() {
  const session = useSessionStore()
  return computed(() => roleAllows(session.user?.role, [...RETURN_WRITE_ROLES]))
}
