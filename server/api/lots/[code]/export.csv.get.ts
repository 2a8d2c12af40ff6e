import { getLotUnitRows } from '../../../services/lot-report'
import { lotUnitsCsv } from '../../../reports/csv'
import { lotParamSchema } from '../../../../shared/utils/reports'
import { writeAudit } from '../../../repos/audit'

/** One row per unit of the lot; technicians and support cannot export. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const lot = await getLotUnitRows(useDb(), code)
  if (!lot) throw httpError(404, 'unknown_lot', `No lot ${code}`)
  await writeAudit(useDb(), { userId: actor.id, action: 'lot.export_csv', entity: 'lot', entityId: code, subject: code, ip: actor.ip, detail: { units: lot.rows.length } })
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="lot-${code}.csv"`)
  return lotUnitsCsv(lot.rows)
})
