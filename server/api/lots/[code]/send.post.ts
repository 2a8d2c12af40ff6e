import { MailNotConfigured } from '../../../mail/index'
import { sendLotReport } from '../../../mail/lot-report'
import { lotParamSchema } from '../../../../shared/utils/reports'
import { writeAudit } from '../../../repos/audit'
import { sendLotReportSchema, type LotReportSent } from '../../../../shared/utils/lot-report-mail'

/** E-mails the lot report PDF to 1–20 recipients (quality and engineers). 503 when mail cannot go out. */
export default defineEventHandler(async (event) => {
  const user = await requireActor(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const input = await readValidatedBody(event, zodValidator(sendLotReportSchema))
  let sent: LotReportSent | undefined
  try {
    sent = await sendLotReport(useDb(), code, input, user)
  } catch (err) {
    if (err instanceof MailNotConfigured) throw httpError(503, err.code, err.message)
    throw httpError(503, 'mail_failed', `The mail server refused the message: ${err instanceof Error ? err.message : String(err)}`)
  }
  if (!sent) throw httpError(404, 'unknown_lot', `No lot ${code}`)
  await writeAudit(useDb(), { userId: user.id, action: 'lot.report_sent', entity: 'lot', entityId: code, subject: code, ip: user.ip, detail: { recipients: sent.recipients, messageId: sent.messageId } })
  return sent satisfies LotReportSent
})
