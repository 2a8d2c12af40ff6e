import type { MaskSummary, ProductView } from '#shared/types/api'

/** Every mask version of every product, newest first, for the masks overview. */
export function useMaskList() {
  return useFetch('/api/masks', { key: 'masks', default: () => [] })
}

/** The products an engineer can build masks for. */
export function useMaskProducts() {
  return useFetch('/api/products', { key: 'mask-products', default: () => [] })
}

/** Mask versions grouped under their product, products in code order, versions newest first. */
export function groupMasksByProduct(products: ProductView[], masks: MaskSummary[]) {
  return [...products]
    .sort((a, b) => a.code.localeCompare(b.code))
    .map((product) => ({
      product,
      versions: masks.filter((m) => m.productCode === product.code).sort((a, b) => b.version - a.version),
    }))
}
