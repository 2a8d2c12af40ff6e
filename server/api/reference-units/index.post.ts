import { registerReferenceUnit } from '../../services/reference-units'
import { referenceRegisterSchema } from '../../../shared/utils/reference-units'
import type { ReferenceUnitView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const input = await readValidatedBody(event, zodValidator(referenceRegisterSchema))
  const created = await registerReferenceUnit(useDb(), input, user.id)
  setResponseStatus(event, 201)
  return created satisfies ReferenceUnitView
})
