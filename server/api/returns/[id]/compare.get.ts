import { compareReturn } from '../../../services/return-compare'
import { idParamSchema } from '../../../../shared/utils/ids'
import type { ReturnComparison } from '../../../../shared/types/returns'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'support', 'quality', 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  return (await compareReturn(useDb(), id)) satisfies ReturnComparison
})
