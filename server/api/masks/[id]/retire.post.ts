import { retireMask } from '../../../services/masks'
import { idParamSchema } from '../../../../shared/utils/ids'
import { maskRetireSchema } from '../../../../shared/utils/mask'
import type { MaskTransition } from '../../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { comment } = await readValidatedBody(event, zodValidator(maskRetireSchema))
  const { version } = await retireMask(useDb(), id, user.id, comment ?? null)
  return { id, version, status: 'retired' } satisfies MaskTransition
})
