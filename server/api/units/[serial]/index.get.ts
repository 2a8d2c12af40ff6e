import { getUnitView } from '../../../services/units'
import { serialParamSchema } from '../../../../shared/utils/ids'
import type { UnitView } from '../../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event)
  const { serial } = await getValidatedRouterParams(event, zodValidator(serialParamSchema))
  const unit = await getUnitView(useDb(), serial)
  if (!unit) throw httpError(404, 'unknown_serial', `Unit ${serial} has never been tested here`)
  return unit satisfies UnitView
})
