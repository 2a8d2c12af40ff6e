import { listCandidates } from '../../services/masks'
import { candidatesQuerySchema } from '../../../shared/utils/mask'
import type { MaskCandidate } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const q = await getValidatedQuery(event, zodValidator(candidatesQuerySchema))
  return (await listCandidates(useDb(), q.product, q.limit)) satisfies MaskCandidate[]
})
