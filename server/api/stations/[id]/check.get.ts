import { getStationCheckStatus } from '../../../services/station-checks'
import { idParamSchema } from '../../../../shared/utils/ids'
import type { StationCheckStatus } from '../../../../shared/types/api'

/** A station's check plan, its state (may it measure production now?) and its latest checks. */
export default defineEventHandler(async (event) => {
  await requireRole(event)
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  return (await getStationCheckStatus(useDb(), id)) satisfies StationCheckStatus
})
