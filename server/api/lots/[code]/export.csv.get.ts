import { getLotUnitRows } from '../../../services/lot-report'
import { lotUnitsCsv } from '../../../reports/csv'
import { lotParamSchema } from '../../../../shared/utils/reports'

/** One row per unit of the lot; technicians and support cannot export. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const lot = await getLotUnitRows(useDb(), code)
  if (!lot) throw httpError(404, 'unknown_lot', `No lot ${code}`)
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="lot-${code}.csv"`)
  return lotUnitsCsv(lot.rows)
})
