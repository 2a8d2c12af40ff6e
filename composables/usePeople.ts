import type { InvitationCreated, InvitationView, PersonView } from '#shared/types/people'
import type { InviteInput, PersonPatch } from '#shared/utils/people'
import { ROLE_LABELS } from '#shared/utils/roles'

export function usePeople() {
  return useFetch('/api/people', { key: 'people', default: () => [] })
}

export function useInvitations() {
  return useFetch('/api/invitations', { key: 'invitations', default: () => [] })
}

/** The admin's changes on the People page: invite, withdraw, new role, (de)activate. */
export function usePeopleAdmin() {
  const { busy, error, run: act } = useAction()
  /** The invitation just made, with its link: shown once. */
  const created = ref<InvitationCreated | null>(null)
  /** The last role change the server made, said beside the person until the next change. */
  const roleChanged = ref<{ id: number; text: string } | null>(null)

  async function run<T>(fn: () => Promise<T>): Promise<T | undefined> {
    let out: T | undefined
    await act(async () => {
      out = await fn()
      await Promise.all([refreshNuxtData('people'), refreshNuxtData('invitations')])
    })
    return out
  }

  return {
    error,
    busy,
    created,
    roleChanged,
    invite: async (input: InviteInput) => {
      // Typed by hand: inferring the route's type through run() exceeds TypeScript's depth limit.
      const out = await run(() => $fetch<InvitationCreated>('/api/invitations', { method: 'POST', body: input }))
      if (out) created.value = out
      return Boolean(out)
    },
    withdraw: (id: number) => {
      // A plain string: the typed-route inference of a template URL is too deep for vue-tsc.
      const url: string = `/api/invitations/${id}`
      return run(() => $fetch<InvitationView>(url, { method: 'DELETE' }))
    },
    change: async (id: number, patch: PersonPatch) => {
      const url: string = `/api/people/${id}`
      roleChanged.value = null
      const out = await run(() => $fetch<PersonView>(url, { method: 'PATCH', body: patch }))
      if (out && patch.role) roleChanged.value = { id, text: `Role changed to ${ROLE_LABELS[out.role]}` }
      return out
    },
  }
}
