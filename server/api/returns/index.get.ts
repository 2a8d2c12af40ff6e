import { listReturns } from '../../repos/returns'
import { returnListQuerySchema } from '../../../shared/utils/returns'
import type { ReturnSummary } from '../../../shared/types/returns'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'support', 'quality', 'engineer')
  const filter = await getValidatedQuery(event, zodValidator(returnListQuerySchema))
  return (await listReturns(useDb(), filter)) satisfies ReturnSummary[]
})
