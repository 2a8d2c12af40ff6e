import { editReturn } from '../../services/returns'
import { idParamSchema } from '../../../shared/utils/ids'
import { returnPatchSchema } from '../../../shared/utils/returns'
import type { ReturnView } from '../../../shared/types/returns'

/** Open returns only (409 `return_closed` once closed; the database refuses it too). */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'support', 'quality')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const change = await readValidatedBody(event, zodValidator(returnPatchSchema))
  return (await editReturn(useDb(), id, change, user.id)) satisfies ReturnView
})
