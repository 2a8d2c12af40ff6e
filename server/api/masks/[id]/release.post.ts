import { releaseAndJudge } from '../../../services/masks'
import { idParamSchema } from '../../../../shared/utils/bench'
import { maskReleaseSchema } from '../../../../shared/utils/mask'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { comment } = await readValidatedBody(event, zodValidator(maskReleaseSchema))
  try {
    const { version, judgedUnjudged } = await releaseAndJudge(useDb(), id, user.id, comment)
    return { id, version, status: 'released' as const, judgedUnjudged }
  } catch (err) {
    throw toHttpError(err)
  }
})
