/**
 * Exports of factory data that leave the building (downloads and e-mails), each audited: who
 * took what, and for e-mails to whom. The rendering and the mail live in server/reports and
 * server/mail; the audit row is written here, once the export is in hand.
 */
import type { Knex } from 'knex'
import type { CertificateSent } from '../../shared/types/units'
import type { SendCertificateInput } from '../../shared/utils/units'
import { mailCertificate } from '../mail/certificate'
import { sendLotReport } from '../mail/lot-report'
import { lotUnitsCsv, maskLimitsCsv } from '../reports/csv'
import { renderLotReportPdf } from '../reports/lot-report-pdf'
import { DomainError } from '../../shared/utils/domain-error'
import { recordAudit } from './audit'
import { getLotReport, getLotUnitRows } from './lot-report'
import { getCertificateData } from './units'
import { getMaskView } from './masks'

/** Who asks for an export: the signed-in person and the address of the request. */
export interface Exporter {
  id: number
  displayName: string
  email: string
  ip?: string | null
}

/**
 * The lot's units as the CSV download (one row per unit), audited.
 * @throws DomainError `unknown_lot` (nothing audited).
 */
export async function exportLotCsv(db: Knex, lotCode: string, by: Pick<Exporter, 'id' | 'ip'>): Promise<string> {
  const lot = await getLotUnitRows(db, lotCode)
  if (!lot) throw new DomainError('unknown_lot', `No lot ${lotCode}`)
  await recordAudit(db, { userId: by.id, action: 'lot.export_csv', entity: 'lot', entityId: lotCode, subject: lotCode, ip: by.ip, detail: { units: lot.rows.length } })
  return lotUnitsCsv(lot.rows)
}

/**
 * A mask's limits as CSV (server/reports/csv.ts maskLimitsCsv), audited.
 * @throws MaskStateError `unknown_mask` (nothing audited).
 */
export async function exportMaskCsv(db: Knex, maskId: number, by: Pick<Exporter, 'id' | 'ip'>): Promise<{ csv: string; name: string }> {
  const view = await getMaskView(db, maskId)
  await recordAudit(db, { userId: by.id, action: 'mask.export_csv', entity: 'mask', entityId: maskId, subject: `${view.product} v${view.version}`, ip: by.ip })
  return { csv: maskLimitsCsv(view), name: `mask-${view.product}-v${view.version}` }
}

/**
 * The lot report as the PDF download, audited.
 * @throws DomainError `unknown_lot` (nothing audited).
 */
export async function exportLotPdf(db: Knex, lotCode: string, by: Pick<Exporter, 'id' | 'ip'>): Promise<Buffer> {
  const report = await getLotReport(db, lotCode)
  if (!report) throw new DomainError('unknown_lot', `No lot ${lotCode}`)
  await recordAudit(db, { userId: by.id, action: 'lot.export_pdf', entity: 'lot', entityId: lotCode, subject: lotCode, ip: by.ip })
  return renderLotReportPdf(report)
}

/**
 * E-mails the lot report and audits it (recipients and the message id) once the mail server took it.
 * @throws what sendLotReport throws (`unknown_lot`, mail not configured, the mail server's refusal).
 */
export async function mailLotReport(db: Knex, lotCode: string, input: Parameters<typeof sendLotReport>[2], by: Exporter): Promise<Awaited<ReturnType<typeof sendLotReport>>> {
  const sent = await sendLotReport(db, lotCode, input, by)
  await recordAudit(db, { userId: by.id, action: 'lot.report_sent', entity: 'lot', entityId: lotCode, subject: lotCode, ip: by.ip, detail: { recipients: sent.recipients, messageId: sent.messageId } })
  return sent
}

/**
 * E-mails a unit's test certificate and audits the export (who, to whom, which test).
 * @throws CertificateError (unknown serial, nothing to certify), or what mailCertificate throws.
 */
export async function sendCertificate(db: Knex, serial: string, input: SendCertificateInput, by: Exporter): Promise<CertificateSent> {
  const data = await getCertificateData(db, serial)
  const sent = await mailCertificate(data, input, by)
  const { unit, test } = data
  await recordAudit(db, {
    userId: by.id,
    action: 'certificate.send',
    entity: 'unit',
    entityId: unit.serial,
    detail: { recordingId: test.id, verdict: test.verdict, maskVersion: test.maskVersion, to: input.to, messageId: sent.messageId },
  })
  return sent
}
