import { getUnitView } from '../../../services/units'
import { serialParamSchema } from '../../../../shared/utils/ids'
import type { UnitView } from '../../../../shared/types/units'

export default defineEventHandler(async (event) => {
  await requireRole(event)
  const { serial } = await getValidatedRouterParams(event, zodValidator(serialParamSchema))
  const unit = await getUnitView(useDb(), serial)
  if (!unit) throw new DomainError('unit_not_found', `Unit ${serial} has never been tested here`)
  return unit satisfies UnitView
})
