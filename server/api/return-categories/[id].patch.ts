import { editReturnCategory } from '../../services/returns'
import { idParamSchema } from '../../../shared/utils/ids'
import { returnCategoryPatchSchema } from '../../../shared/utils/returns'
import type { ReturnCategoryView } from '../../../shared/types/returns'

/** Rename, reorder, or deactivate (a category is never deleted: returns keep theirs). */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'admin')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const change = await readValidatedBody(event, zodValidator(returnCategoryPatchSchema))
  return (await editReturnCategory(useDb(), id, change, user.id)) satisfies ReturnCategoryView
})
