import { listProducts } from '../../repos/products'
import type { ProductListItem } from '../../../shared/utils/product'

export default defineEventHandler(async (event) => {
  await requireRole(event)
  return (await listProducts(useDb())) satisfies ProductListItem[]
})
