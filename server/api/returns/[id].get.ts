import { getReturn } from '../../services/returns'
import { idParamSchema } from '../../../shared/utils/ids'
import type { ReturnView } from '../../../shared/types/returns'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'support', 'quality', 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  return (await getReturn(useDb(), id)) satisfies ReturnView
})
