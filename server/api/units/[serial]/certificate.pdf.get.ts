import { downloadCertificate } from '../../../services/units'
import { serialParamSchema } from '../../../../shared/utils/ids'
import { CERTIFICATE_ROLES } from '../../../../shared/utils/units'

/** The unit's one-page test certificate (support, quality, engineers); every download is audited. */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, ...CERTIFICATE_ROLES)
  const { serial } = await getValidatedRouterParams(event, zodValidator(serialParamSchema))
  const { pdf, filename } = await downloadCertificate(useDb(), serial, user)
  setResponseHeader(event, 'content-type', 'application/pdf')
  setResponseHeader(event, 'content-disposition', `attachment; filename="${filename}"`)
  return pdf
})
