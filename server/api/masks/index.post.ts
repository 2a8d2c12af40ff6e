import { createMaskFromGolden, getMaskView } from '../../services/masks'
import { maskCreateSchema } from '../../../shared/utils/mask'
import type { MaskView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const input = await readValidatedBody(event, zodValidator(maskCreateSchema))
  const db = useDb()
  const id = await createMaskFromGolden(db, input, user.id)
  setResponseStatus(event, 201)
  return (await getMaskView(db, id))! satisfies MaskView
})
