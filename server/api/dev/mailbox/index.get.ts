import { activeMailboxDir } from '../../../mail/index'
import { listMailbox } from '../../../mail/mailbox'
import type { MailboxList } from '../../../../shared/types/mail'

/** Dev only: what the local mail sink received, newest first (404 mailbox_off with a real SMTP server). */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'admin')
  const dir = activeMailboxDir()
  if (!dir) throw new DomainError('mailbox_off', 'Mail goes to a real SMTP server: there is no local mailbox')
  return { dir, messages: await listMailbox(dir) } satisfies MailboxList
})
