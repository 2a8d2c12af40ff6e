import { listAlerts } from '../../services/alerts'
import { alertsQuerySchema } from '../../../shared/utils/alerts'
import type { AlertView } from '../../../shared/types/reports'

/** Alerts newest first; `?open=true` only the open ones. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'quality', 'engineer')
  const q = await getValidatedQuery(event, zodValidator(alertsQuerySchema))
  return (await listAlerts(useDb(), { open: q.open, productCode: q.product, limit: q.limit })) satisfies AlertView[]
})
