import { rm } from 'node:fs/promises'
import { addReturnAttachment } from '../../../../services/returns'
import { maxAttachmentBytes, useAttachmentStorage } from '../../../../storage/attachments'
import { idParamSchema } from '../../../../../shared/utils/ids'
import type { ReturnAttachmentView } from '../../../../../shared/types/returns'

/** A PNG, JPEG or PDF (told by its bytes, 415 otherwise), up to CONETRAIL_MAX_ATTACHMENT_MB (413). */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'support', 'quality')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { file } = await readMultipartUpload(event, { maxBytes: maxAttachmentBytes() })
  try {
    if (!file) throw new DomainError('missing_file', 'Attach the photo or document in a form field named "file"')
    const added = await addReturnAttachment(useDb(), useAttachmentStorage(), id, file, user.id)
    setResponseStatus(event, 201)
    return added satisfies ReturnAttachmentView
  } finally {
    if (file) await rm(file.path, { force: true })
  }
})
