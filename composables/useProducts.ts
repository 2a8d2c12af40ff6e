/** The Products page's list (key shared with the editor's refresh). */
export function useProducts() {
  return useFetch('/api/products', { key: 'products', default: () => [] })
}
