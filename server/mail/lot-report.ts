/** E-mailing a lot report: the PDF of server/reports/lot-report-pdf.ts attached to a short message. */
import { DomainError } from '../../shared/utils/domain-error'
import type { Knex } from 'knex'
import { renderLotReportPdf } from '../reports/lot-report-pdf'
import { getLotReport } from '../services/lot-report'
import type { LotReportSent, SendLotReportInput } from '../../shared/utils/lot-report-mail'
import { sendMail } from './index'

const pct = (x: number | null) => (x === null ? 'n/a' : `${Math.round(x * 1000) / 10} %`)

/**
 * Renders the lot's report and mails it; undefined for an unknown lot.
 * @throws MailError (`mail_not_configured`, `mail_failed`).
 */
export async function sendLotReport(db: Knex, lotCode: string, input: SendLotReportInput, by: { displayName: string; email: string }): Promise<LotReportSent> {
  const report = await getLotReport(db, lotCode)
  if (!report) throw new DomainError('unknown_lot', `No lot ${lotCode}`)
  const pdf = await renderLotReportPdf(report)
  const s = report.summary
  const filename = `lot-${report.lot.code}.pdf`
  const text = [
    ...(input.message ? [input.message, ''] : []),
    `Lot report ${report.lot.code}, ${report.lot.productCode} (${report.lot.productName}), attached as ${filename}.`,
    `Units tested: ${s.unitsTested}; first-pass yield ${pct(s.firstPassYield)}; final yield ${pct(s.finalYield)}.`,
    '',
    `Sent by ${by.displayName} <${by.email}> from Conetrail.`,
  ].join('\n')
  const info = await sendMail({
    to: input.recipients,
    subject: `Lot report ${report.lot.code} (${report.lot.productCode})`,
    text,
    attachments: [{ filename, content: pdf, contentType: 'application/pdf' }],
  })
  return { lotCode: report.lot.code, recipients: input.recipients, accepted: info.accepted, messageId: info.messageId, attachment: filename }
}
