import { listAudit } from '../../repos/audit'
import { auditQuerySchema } from '../../../shared/utils/audit'
import type { AuditPage } from '../../../shared/types/people'

/** The audit log, newest first: `?from&to` (ISO times), `actor`, `action`, `subject`, `page`, `pageSize`. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'admin')
  const query = await getValidatedQuery(event, zodValidator(auditQuerySchema))
  return (await listAudit(useDb(), query)) satisfies AuditPage
})
