import { releaseStation } from '../../../services/station-checks'
import { idParamSchema } from '../../../../shared/utils/ids'
import { stationReleaseSchema } from '../../../../shared/utils/station-checks'
import type { StationCheckStatus } from '../../../../shared/types/api'

/** Lets a blocked station measure for a stated number of hours, with the engineer's reason (audited). */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { comment, hours } = await readValidatedBody(event, zodValidator(stationReleaseSchema))
  return (await releaseStation(useDb(), id, user.id, comment, hours)) satisfies StationCheckStatus
})
