import { getRecordingView } from '../../repos/recordings'
import { curvesQuerySchema } from '../../../shared/utils/recordings'
import { idParamSchema } from '../../../shared/utils/ids'
import type { RecordingView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const caller = await requireUserOrStation(event)
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { include } = await getValidatedQuery(event, zodValidator(curvesQuerySchema))
  const view = await getRecordingView(useDb(), id, { curves: include === 'curves' })
  if (!view || (caller.kind === 'station' && view.stationId !== caller.station.id)) {
    throw new DomainError('not_found', `No recording ${id}`)
  }
  return view satisfies RecordingView
})
