import { getLotReport } from '../../../services/lot-report'
import { renderLotReportPdf } from '../../../reports/pdf'
import { lotParamSchema } from '../../../../shared/utils/reports'
import { writeAudit } from '../../../repos/audit'

/** The lot report as a PDF download; technicians and support cannot export. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const report = await getLotReport(useDb(), code)
  if (!report) throw httpError(404, 'unknown_lot', `No lot ${code}`)
  await writeAudit(useDb(), { userId: actor.id, action: 'lot.export_pdf', entity: 'lot', entityId: code, subject: code, ip: actor.ip })
  setResponseHeader(event, 'content-type', 'application/pdf')
  setResponseHeader(event, 'content-disposition', `attachment; filename="lot-${code}.pdf"`)
  return await renderLotReportPdf(report)
})
