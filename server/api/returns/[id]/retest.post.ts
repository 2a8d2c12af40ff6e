import { rm } from 'node:fs/promises'
import { retestReturn } from '../../../services/returns'
import { idParamSchema } from '../../../../shared/utils/ids'
import { returnRetestFieldsSchema } from '../../../../shared/utils/returns'
import type { UploadAccepted } from '../../../../shared/types/api'

/** A return test of the return's unit, through the production pipeline (202 queued; the same file again 200). */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'support', 'quality')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  holdUploadSlot(event)
  const { fields, file } = await readMultipartUpload(event)
  try {
    const input = parseInput(returnRetestFieldsSchema, fields)
    if (!file) throw new DomainError('missing_file', 'Attach the recording in a form field named "file"')
    const station = await chosenStation(input.station)
    const outcome = await retestReturn(useDb(), useRecordingStorage(), await useBoss(), id, {
      tempPath: file.path,
      originalName: file.originalName,
      fields: input,
      station: uploadStation(station),
      userId: user.id,
    })
    setResponseStatus(event, outcome.duplicate ? 200 : 202)
    return outcome satisfies UploadAccepted
  } finally {
    if (file) await rm(file.path, { force: true })
  }
})
