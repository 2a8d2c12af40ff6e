import { registerReturn } from '../../services/returns'
import { returnCreateSchema } from '../../../shared/utils/returns'
import type { ReturnView } from '../../../shared/types/returns'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'support', 'quality')
  const input = await readValidatedBody(event, zodValidator(returnCreateSchema))
  const created = await registerReturn(useDb(), input, user.id)
  setResponseStatus(event, 201)
  return created satisfies ReturnView
})
