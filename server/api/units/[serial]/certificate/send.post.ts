import { MailNotConfigured } from '../../../../mail/index'
import { sendCertificate } from '../../../../mail/certificate'
import { CertificateError } from '../../../../services/units'
import { serialParamSchema } from '../../../../../shared/utils/ids'
import { CERTIFICATE_ROLES, sendCertificateSchema } from '../../../../../shared/utils/units'
import type { CertificateSent } from '../../../../../shared/types/units'

/** E-mails the unit's test certificate (support, quality, engineers); 503 when mail cannot go out. Audited. */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, ...CERTIFICATE_ROLES)
  const { serial } = await getValidatedRouterParams(event, zodValidator(serialParamSchema))
  const input = await readValidatedBody(event, zodValidator(sendCertificateSchema))
  try {
    return (await sendCertificate(useDb(), serial, input, user)) satisfies CertificateSent
  } catch (err) {
    if (err instanceof CertificateError) throw httpError(err.status, err.code, err.message)
    if (err instanceof MailNotConfigured) throw httpError(503, err.code, err.message)
    throw httpError(503, 'mail_failed', `The mail server refused the message: ${err instanceof Error ? err.message : String(err)}`)
  }
})
