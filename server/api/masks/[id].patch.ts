import { editMaskDraft } from '../../services/masks'
import { idParamSchema } from '../../../shared/utils/ids'
import { maskPatchSchema } from '../../../shared/utils/mask'
import type { MaskView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const patch = await readValidatedBody(event, zodValidator(maskPatchSchema))
  return (await editMaskDraft(useDb(), id, patch)) satisfies MaskView
})
