import type { ProductListItem } from '#shared/utils/product'

/** The Products page's list (key shared with the editor's refresh). */
export function useProducts() {
  return useFetch<ProductListItem[]>('/api/products', { key: 'products', default: () => [] })
}
