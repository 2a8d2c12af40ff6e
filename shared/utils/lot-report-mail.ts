import { z } from 'zod'
import { plainText } from './input'

export const MAX_RECIPIENTS = 20

/** One address mail goes to (lot reports, alert subscribers): trimmed and lower-cased. */
export const mailRecipientSchema = z.string().trim().toLowerCase().max(254).pipe(z.email('Enter a valid e-mail address'))

/** POST /api/lots/[code]/send and its form. */
export const sendLotReportSchema = z.object({
  recipients: z.array(mailRecipientSchema).min(1, 'Name at least one recipient').max(MAX_RECIPIENTS, `At most ${MAX_RECIPIENTS} recipients`),
  message: plainText().trim().max(4000).optional(),
})
export type SendLotReportInput = z.infer<typeof sendLotReportSchema>

/** POST /api/lots/[code]/send answer. */
export interface LotReportSent {
  lotCode: string
  recipients: string[]
  /** Addresses the SMTP server accepted. */
  accepted: string[]
  messageId: string
  attachment: string
}
