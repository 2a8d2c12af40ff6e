import { exportLotUnitRows } from '../../../services/exports'
import { lotUnitsCsv } from '../../../reports/csv'
import { lotParamSchema } from '../../../../shared/utils/reports'

/** One row per unit of the lot; technicians and support cannot export. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const lot = await exportLotUnitRows(useDb(), code, actor)
  if (!lot) throw new DomainError('unknown_lot', `No lot ${code}`)
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="lot-${code}.csv"`)
  return lotUnitsCsv(lot.rows)
})
