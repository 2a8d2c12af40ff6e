import { previewMask } from '../../../services/masks'
import { idParamSchema } from '../../../../shared/utils/ids'
import { previewQuerySchema } from '../../../../shared/utils/mask'
import type { MaskPreview } from '../../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { last } = await getValidatedQuery(event, zodValidator(previewQuerySchema))
  const preview = await previewMask(useDb(), id, last)
  if (!preview) throw new DomainError('unknown_mask', `No mask ${id}`)
  return preview satisfies MaskPreview
})
