import type { DashboardView } from '#shared/types/reports'

/** Today's dashboard: yield per line and product, open lots, alerts. */
export function useDashboard() {
  return useFetch<DashboardView>('/api/dashboard', { key: 'dashboard' })
}
