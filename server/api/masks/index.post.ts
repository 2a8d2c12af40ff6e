import { createMask } from '../../services/masks'
import { maskCreateSchema } from '../../../shared/utils/mask'
import type { MaskView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const input = await readValidatedBody(event, zodValidator(maskCreateSchema))
  const mask = await createMask(useDb(), input, user.id)
  setResponseStatus(event, 201)
  return mask satisfies MaskView
})
