import { listRecentRecordings } from '../../repos/recordings'
import { recentQuerySchema } from '../../../shared/utils/recordings'
import type { RecordingSummary } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const caller = await requireUserOrStation(event)
  const q = await getValidatedQuery(event, zodValidator(recentQuerySchema))
  // A station sees only its own recordings.
  const stationId = caller.kind === 'station' ? caller.station.id : q.station
  return (await listRecentRecordings(useDb(), { stationId, limit: q.limit })) satisfies RecordingSummary[]
})
