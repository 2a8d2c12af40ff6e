import { readReturnAttachment } from '../../../../services/returns'
import { useAttachmentStorage } from '../../../../storage/attachments'
import { returnAttachmentParamSchema, returnDownloadName } from '../../../../../shared/utils/returns'

/** The attachment's bytes as a download: the type it was stored as, a sanitised name with that type's extension, no sniffing. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'support', 'quality', 'engineer')
  const { id, attachmentId } = await getValidatedRouterParams(event, zodValidator(returnAttachmentParamSchema))
  const { view, bytes } = await readReturnAttachment(useDb(), useAttachmentStorage(), id, attachmentId)
  const name = returnDownloadName(view.originalName, view.contentType, `attachment-${view.id}`)
  setResponseHeader(event, 'content-type', view.contentType)
  setResponseHeader(event, 'content-disposition', `attachment; filename="${name}"; filename*=UTF-8''${encodeURIComponent(name)}`)
  setResponseHeader(event, 'x-content-type-options', 'nosniff')
  setResponseHeader(event, 'cache-control', 'private, no-store')
  return bytes
})
