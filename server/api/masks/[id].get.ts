import { getMaskView } from '../../services/masks'
import { idParamSchema } from '../../../shared/utils/ids'
import type { MaskView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  return (await getMaskView(useDb(), id)) satisfies MaskView
})
