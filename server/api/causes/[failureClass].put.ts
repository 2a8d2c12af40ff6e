import { putCause } from '../../repos/causes'
import { causeParamSchema, causePutSchema } from '../../../shared/utils/reports'
import type { LikelyCause } from '../../../shared/types/reports'

/** Engineers keep the likely causes; the row records who changed it and when. */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { failureClass } = await getValidatedRouterParams(event, zodValidator(causeParamSchema))
  const body = await readValidatedBody(event, zodValidator(causePutSchema))
  return (await putCause(useDb(), failureClass, body, user.id)) satisfies LikelyCause
})
