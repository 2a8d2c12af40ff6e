/** E-mailing a unit's test certificate: the PDF of server/reports/certificate.ts attached to a short message. */
import type { Knex } from 'knex'
import type { CertificateSent } from '../../shared/types/units'
import type { SendCertificateInput } from '../../shared/utils/units'
import { writeAudit } from '../repos/audit'
import { renderCertificatePdf } from '../reports/certificate'
import { certificateFilename, getCertificateData } from '../services/units'
import { sendMail } from './index'

/**
 * Renders the unit's certificate, mails it, and records the export (who, to whom) in the audit log.
 * @throws CertificateError (unknown serial, nothing to certify), MailNotConfigured, or the SMTP server's refusal.
 */
export async function sendCertificate(db: Knex, serial: string, input: SendCertificateInput, by: { id: number; displayName: string; email: string }): Promise<CertificateSent> {
  const data = await getCertificateData(db, serial)
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
  await writeAudit(db, {
    userId: by.id,
    action: 'certificate.send',
    entity: 'unit',
    entityId: unit.serial,
    detail: { recordingId: test.id, verdict: test.verdict, maskVersion: test.maskVersion, to: input.to, messageId: info.messageId },
  })
  return { serial: unit.serial, recipients: input.to, accepted: info.accepted, messageId: info.messageId, attachment: filename }
}
