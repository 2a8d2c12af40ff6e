import { releaseAndJudge } from '../../../services/masks'
import { idParamSchema } from '../../../../shared/utils/ids'
import { maskReleaseSchema } from '../../../../shared/utils/mask'
import type { MaskTransition } from '../../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { comment, confirmFalseReject } = await readValidatedBody(event, zodValidator(maskReleaseSchema))
  const { version, judgedUnjudged } = await releaseAndJudge(useDb(), id, user.id, comment, { confirmFalseReject })
  return { id, version, status: 'released', judgedUnjudged } satisfies MaskTransition
})
