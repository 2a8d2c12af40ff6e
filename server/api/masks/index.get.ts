import { listMasks } from '../../repos/masks'
import { maskListQuerySchema } from '../../../shared/utils/mask'
import type { MaskSummary } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { product } = await getValidatedQuery(event, zodValidator(maskListQuerySchema))
  return (await listMasks(useDb(), { productCode: product })) satisfies MaskSummary[]
})
