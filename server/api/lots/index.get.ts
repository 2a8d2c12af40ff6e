import { listLots } from '../../repos/lots'
import { lotListQuerySchema } from '../../../shared/utils/reports'
import type { LotSummary } from '../../../shared/types/reports'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'quality', 'engineer', 'support')
  const q = await getValidatedQuery(event, zodValidator(lotListQuerySchema))
  return (await listLots(useDb(), { productCode: q.product, open: q.open, limit: q.limit })) satisfies LotSummary[]
})
