import { closeReturn } from '../../../services/returns'
import { idParamSchema } from '../../../../shared/utils/ids'
import { returnCloseSchema } from '../../../../shared/utils/returns'
import type { ReturnView } from '../../../../shared/types/returns'

/** Closes with a disposition (422 `disposition_required` without one) and writes the audit log. */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'support', 'quality')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const input = await readValidatedBody(event, zodValidator(returnCloseSchema))
  return (await closeReturn(useDb(), id, input, user.id)) satisfies ReturnView
})
