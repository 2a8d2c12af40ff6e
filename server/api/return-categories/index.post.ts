import { addReturnCategory } from '../../services/returns'
import { returnCategoryCreateSchema } from '../../../shared/utils/returns'
import type { ReturnCategoryView } from '../../../shared/types/returns'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'admin')
  const input = await readValidatedBody(event, zodValidator(returnCategoryCreateSchema))
  const created = await addReturnCategory(useDb(), input, user.id)
  setResponseStatus(event, 201)
  return created satisfies ReturnCategoryView
})
