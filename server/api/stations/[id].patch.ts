import { mergeProfile, updateStation } from '../../repos/stations'
import { stationProfileSchema, type StationProfile } from '../../../shared/utils/station-profile'
import { idParamSchema } from '../../../shared/utils/ids'
import { stationPatchSchema } from '../../../shared/utils/stations'
import type { StationView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const patch = await readValidatedBody(event, zodValidator(stationPatchSchema))
  const edit = patch.profile
  // A partial profile edits the current one: fields it does not name keep their calibration.
  const profile = edit ? (current: StationProfile) => parseInput(stationProfileSchema, mergeProfile(current, edit), 'profile') : undefined
  const station = await updateStation(useDb(), id, { ...patch, profile }, user.id)
  if (!station) throw new DomainError('not_found', `No station ${id}`)
  return station satisfies StationView
})
