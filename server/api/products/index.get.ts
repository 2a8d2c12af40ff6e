import { listProducts } from '../../repos/products'
import type { ProductView } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event)
  return (await listProducts(useDb())) satisfies ProductView[]
})
