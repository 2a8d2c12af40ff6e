import { z } from 'zod'
import { activeMailboxDir } from '../../../mail/index'
import { getMailboxMessage } from '../../../mail/mailbox'
import type { MailboxMessage } from '../../../../shared/types/mail'

const paramsSchema = z.object({ id: z.string().regex(/^\d{1,16}-\d{1,8}$/, 'Not a mailbox message id') })
const querySchema = z.object({ format: z.enum(['json', 'raw']).default('json') })

/** Dev only: one message of the local mailbox, as JSON (text, html, raw) or `?format=raw` as the .eml itself. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'admin')
  const dir = activeMailboxDir()
  if (!dir) throw new DomainError('mailbox_off', 'Mail goes to a real SMTP server: there is no local mailbox')
  const { id } = await getValidatedRouterParams(event, zodValidator(paramsSchema))
  const { format } = await getValidatedQuery(event, zodValidator(querySchema))
  const message = await getMailboxMessage(dir, id)
  if (!message) throw new DomainError('unknown_message', `No message ${id} in the mailbox`)
  if (format === 'raw') {
    setResponseHeader(event, 'content-type', 'message/rfc822; charset=utf-8')
    setResponseHeader(event, 'content-disposition', `inline; filename="${id}.eml"`)
    return message.raw
  }
  return message satisfies MailboxMessage
})
