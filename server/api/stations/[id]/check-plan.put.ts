import { z } from 'zod'
import { setCheckPlan } from '../../../services/station-checks'
import { idParamSchema } from '../../../../shared/utils/ids'
import { checkPlanSchema } from '../../../../shared/utils/station-checks'
import type { StationCheckStatus } from '../../../../shared/types/api'

const bodySchema = z.object({ plan: checkPlanSchema.nullable() })

/** Sets a station's check plan, or removes it with `{ plan: null }`. */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { plan } = await readValidatedBody(event, zodValidator(bodySchema))
  return (await setCheckPlan(useDb(), id, plan, user.id)) satisfies StationCheckStatus
})
