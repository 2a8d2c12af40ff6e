import { rm } from 'node:fs/promises'
import { acceptUpload } from '../../services/ingest'
import { uploadFieldsSchema } from '../../../shared/utils/recordings'
import type { UploadAccepted } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const caller = await requireUserOrStation(event, 'technician', 'engineer')
  holdUploadSlot(event)
  const { fields, file } = await readMultipartUpload(event)
  try {
    const input = parseInput(uploadFieldsSchema, fields)
    if (!file) throw new DomainError('missing_file', 'Attach the recording in a form field named "file"')
    const tokenStation = caller.kind === 'station' ? caller.station : undefined
    if (tokenStation && input.station !== undefined && input.station !== tokenStation.id) {
      throw new DomainError('wrong_station', 'This token belongs to another station')
    }
    const station = tokenStation ?? (await chosenStation(input.station))
    const outcome = await acceptUpload(useDb(), useRecordingStorage(), await useBoss(), {
      tempPath: file.path,
      originalName: file.originalName,
      fields: input,
      station: uploadStation(station),
      userId: caller.kind === 'user' ? caller.user.id : null,
    })
    setResponseStatus(event, outcome.duplicate ? 200 : 202)
    return outcome satisfies UploadAccepted
  } finally {
    if (file) await rm(file.path, { force: true })
  }
})
