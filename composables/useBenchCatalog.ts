/** Products and stations for the bench selects (lists change rarely: fetched once per visit). */
export function useBenchProducts() {
  return useFetch('/api/products', { key: 'bench-products', default: () => [] })
}

export function useBenchStations() {
  return useFetch('/api/stations', { key: 'bench-stations', default: () => [] })
}
