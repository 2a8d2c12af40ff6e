import { getReferenceUnit } from '../../repos/reference-units'
import { idParamSchema } from '../../../shared/utils/ids'
import { ReferenceError } from '../../services/reference-units'
import type { ReferenceUnitView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event)
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const ref = await getReferenceUnit(useDb(), id)
  if (!ref) throw new ReferenceError('unknown_reference_unit', `No reference unit ${id}`)
  return ref satisfies ReferenceUnitView
})
