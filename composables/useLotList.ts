/** The lots list, filtered by product code and "open only" (both in the query, refetched on change). */
export function useLotList(filter: { product: Ref<string>; openOnly: Ref<boolean> }) {
  const query = computed(() => ({
    ...(filter.product.value ? { product: filter.product.value } : {}),
    ...(filter.openOnly.value ? { open: 'true' } : {}),
  }))
  return useFetch('/api/lots', { key: 'lots', query, default: () => [] })
}
