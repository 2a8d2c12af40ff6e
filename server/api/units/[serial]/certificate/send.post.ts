import { sendCertificate } from '../../../../services/exports'
import { serialParamSchema } from '../../../../../shared/utils/ids'
import { CERTIFICATE_ROLES, sendCertificateSchema } from '../../../../../shared/utils/units'
import type { CertificateSent } from '../../../../../shared/types/units'

/** E-mails the unit's test certificate (support, quality, engineers); 503 when mail cannot go out. Audited. */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, ...CERTIFICATE_ROLES)
  const { serial } = await getValidatedRouterParams(event, zodValidator(serialParamSchema))
  const input = await readValidatedBody(event, zodValidator(sendCertificateSchema))
  return (await sendCertificate(useDb(), serial, input, user)) satisfies CertificateSent
})
