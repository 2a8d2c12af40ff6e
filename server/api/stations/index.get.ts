import { listStations } from '../../repos/stations'
import type { StationView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event)
  return (await listStations(useDb())) satisfies StationView[]
})
