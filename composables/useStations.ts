import type { StationView } from '#shared/types/api'

export function useStations() {
  return useFetch<StationView[]>('/api/stations', { key: 'stations', default: () => [] })
}
