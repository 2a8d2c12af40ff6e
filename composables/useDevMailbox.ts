import type { MailboxMessage } from '#shared/types/mail'

/** The local mail sink's messages (dev only, admins). */
export function useDevMailbox() {
  return useFetch('/api/dev/mailbox', { key: 'dev-mailbox' })
}

/** One message of the local mailbox, fetched when `id` is set. */
export function useDevMailboxMessage(id: Ref<string | null>) {
  // useRequestFetch forwards the session cookie when this runs on the server.
  const fetcher = useRequestFetch()
  return useAsyncData<MailboxMessage | null>('dev-mailbox-message', () => (id.value ? fetcher<MailboxMessage>(`/api/dev/mailbox/${id.value}`) : Promise.resolve(null)), {
    watch: [id],
    default: () => null,
  })
}
