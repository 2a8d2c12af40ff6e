import { createStation } from '../../services/stations'
import { stationProfileSchema } from '../../../shared/utils/station-profile'
import { stationCreateSchema } from '../../../shared/utils/stations'
import type { StationToken } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireActor(event, 'engineer')
  const body = await readValidatedBody(event, zodValidator(stationCreateSchema))
  const profile = parseInput(stationProfileSchema, body.profile, 'profile')
  const created = await createStation(useDb(), { name: body.name, line: body.line, profile, createdBy: user.id, ip: user.ip })
  setResponseStatus(event, 201)
  // The token is shown this once; only its hash is kept.
  return created satisfies StationToken
})
