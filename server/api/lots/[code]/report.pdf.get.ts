import { exportLotPdf } from '../../../services/exports'
import { lotParamSchema } from '../../../../shared/utils/reports'

/** The lot report as a PDF download; technicians and support cannot export. Audited. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const pdf = await exportLotPdf(useDb(), code, actor)
  setResponseHeader(event, 'content-type', 'application/pdf')
  setResponseHeader(event, 'content-disposition', `attachment; filename="lot-${code}.pdf"`)
  return pdf
})
