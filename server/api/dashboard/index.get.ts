import { getDashboard } from '../../services/dashboard'
import { dashboardQuerySchema } from '../../../shared/utils/reports'
import type { DashboardView } from '../../../shared/types/reports'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'quality', 'engineer')
  const { day } = await getValidatedQuery(event, zodValidator(dashboardQuerySchema))
  return (await getDashboard(useDb(), day ?? new Date().toISOString().slice(0, 10))) satisfies DashboardView
})
