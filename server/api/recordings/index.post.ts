import { rm } from 'node:fs/promises'
import { acceptUpload } from '../../services/ingest'
import { getStation } from '../../repos/stations'
import { uploadFieldsSchema } from '../../../shared/utils/bench'
import type { UploadAccepted } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const caller = await requireUserOrStation(event, 'technician', 'engineer')
  const { fields, file } = await readMultipartUpload(event)
  try {
    const input = uploadFieldsSchema.safeParse(fields)
    if (!input.success) throw new InputValidationError(input.error)
    if (!file) throw httpError(400, 'missing_file', 'Attach the recording in a form field named "file"')
    const db = useDb()
    let station = caller.kind === 'station' ? caller.station : undefined
    if (station && input.data.station !== undefined && input.data.station !== station.id) {
      throw httpError(403, 'wrong_station', 'This token belongs to another station')
    }
    if (!station && input.data.station !== undefined) {
      station = await getStation(db, input.data.station)
      if (!station?.active) throw httpError(422, 'unknown_station', `No active station with id ${input.data.station}`)
    }
    const outcome = await acceptUpload(db, useRecordingStorage(), await useBoss(), {
      tempPath: file.path,
      originalName: file.originalName,
      fields: input.data,
      station: station ? { id: station.id, profileId: station.profileId, profile: station.profile } : null,
      userId: caller.kind === 'user' ? caller.user.id : null,
    })
    setResponseStatus(event, outcome.duplicate ? 200 : 202)
    return outcome satisfies UploadAccepted
  } catch (err) {
    if (err instanceof InputValidationError) throw httpError(400, err.code, err.message, { issues: err.issues })
    throw toHttpError(err)
  } finally {
    if (file) await rm(file.path, { force: true })
  }
})
