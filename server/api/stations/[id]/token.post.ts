import { rotateStationToken } from '../../../repos/stations'
import { idParamSchema } from '../../../../shared/utils/bench'
import type { StationToken } from '../../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const token = await rotateStationToken(useDb(), id)
  if (!token) throw httpError(404, 'not_found', `No station ${id}`)
  return { id, token } satisfies StationToken
})
