import { exportLotCsv } from '../../../services/exports'
import { lotParamSchema } from '../../../../shared/utils/reports'

/** One row per unit of the lot; technicians and support cannot export. Audited. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const csv = await exportLotCsv(useDb(), code, actor)
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="lot-${code}.csv"`)
  return csv
})
