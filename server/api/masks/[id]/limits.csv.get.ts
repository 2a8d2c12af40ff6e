import { exportMaskCsv } from '../../../services/exports'
import { idParamSchema } from '../../../../shared/utils/ids'

/** The mask's limits, how each was proposed and its estimated false-reject share, as CSV. Engineers and quality; audited. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'engineer', 'quality')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { csv, name } = await exportMaskCsv(useDb(), id, actor)
  setResponseHeader(event, 'content-type', 'text/csv; charset=utf-8')
  setResponseHeader(event, 'content-disposition', `attachment; filename="${name}.csv"`)
  return csv
})
