import { updateMaskDraft } from '../../repos/masks'
import { getMaskView } from '../../services/masks'
import { idParamSchema } from '../../../shared/utils/ids'
import { maskPatchSchema } from '../../../shared/utils/mask'
import type { MaskView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const patch = await readValidatedBody(event, zodValidator(maskPatchSchema))
  const db = useDb()
  await updateMaskDraft(db, id, patch)
  return (await getMaskView(db, id))! satisfies MaskView
})
