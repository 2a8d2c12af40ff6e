export function useStations() {
  return useFetch('/api/stations', { key: 'stations', default: () => [] })
}
