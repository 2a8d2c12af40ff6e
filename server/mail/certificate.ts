/** E-mailing a unit's test certificate: the PDF of server/reports/certificate.ts attached to a short message. */
import type { CertificateSent } from '../../shared/types/units'
import type { SendCertificateInput } from '../../shared/utils/units'
import { renderCertificatePdf, type CertificateData } from '../reports/certificate'
import { certificateFilename } from '../services/units'
import { sendMail } from './index'

/**
 * Renders the unit's certificate and mails it (the service that calls it audits the export).
 * @throws CertificateError (unknown serial, nothing to certify), MailError (`mail_not_configured`, `mail_failed`).
 */
export async function mailCertificate(data: CertificateData, input: SendCertificateInput, by: { displayName: string; email: string }): Promise<CertificateSent> {
  const pdf = await renderCertificatePdf(data)
  const { unit, test } = data
  const filename = certificateFilename(unit.serial)
  const verdict = test.verdict ? test.verdict.toUpperCase() : 'NOT JUDGED'
  const text = [
    ...(input.message ? [input.message, ''] : []),
    `Test certificate of unit ${unit.serial}, ${unit.product.code} (${unit.product.name}), attached as ${filename}.`,
    `End-of-line test of ${test.uploadedAt.slice(0, 10)}: ${verdict}${test.maskVersion ? ` (mask version ${test.maskVersion})` : ''}.`,
    '',
    `Sent by ${by.displayName} <${by.email}> from Conetrail.`,
  ].join('\n')
  const info = await sendMail({
    to: input.to,
    subject: `Test certificate ${unit.serial} (${unit.product.code})`,
    text,
    attachments: [{ filename, content: pdf, contentType: 'application/pdf' }],
  })
  return { serial: unit.serial, recipients: input.to, accepted: info.accepted, messageId: info.messageId, attachment: filename }
}
