import { getMaskView } from '../../services/masks'
import { idParamSchema } from '../../../shared/utils/ids'
import type { MaskView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const view = await getMaskView(useDb(), id)
  if (!view) throw new DomainError('unknown_mask', `No mask ${id}`)
  return view satisfies MaskView
})
