/** Today's dashboard: yield per line and product, open lots, alerts. */
export function useDashboard() {
  return useFetch('/api/dashboard', { key: 'dashboard' })
}
