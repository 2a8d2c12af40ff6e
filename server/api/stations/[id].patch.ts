import { updateStation } from '../../repos/stations'
import { stationProfileSchema } from '../../analysis/index'
import { idParamSchema, stationPatchSchema } from '../../../shared/utils/bench'
import type { StationView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const patch = await readValidatedBody(event, zodValidator(stationPatchSchema))
  const profile = patch.profile ? parseInput(stationProfileSchema, patch.profile, 'profile') : undefined
  const station = await updateStation(useDb(), id, { ...patch, profile }, user.id)
  if (!station) throw httpError(404, 'not_found', `No station ${id}`)
  return station satisfies StationView
})
