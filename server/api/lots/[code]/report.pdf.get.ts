import { exportLotReport } from '../../../services/exports'
import { renderLotReportPdf } from '../../../reports/lot-report-pdf'
import { lotParamSchema } from '../../../../shared/utils/reports'

/** The lot report as a PDF download; technicians and support cannot export. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const report = await exportLotReport(useDb(), code, actor)
  if (!report) throw new DomainError('unknown_lot', `No lot ${code}`)
  setResponseHeader(event, 'content-type', 'application/pdf')
  setResponseHeader(event, 'content-disposition', `attachment; filename="lot-${code}.pdf"`)
  return await renderLotReportPdf(report)
})
