import { rotateStationToken } from '../../../services/stations'
import { idParamSchema } from '../../../../shared/utils/ids'
import type { StationToken } from '../../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const token = await rotateStationToken(useDb(), id, { userId: actor.id, ip: actor.ip })
  if (!token) throw new DomainError('not_found', `No station ${id}`)
  return { id, token } satisfies StationToken
})
