import { getProductByCode } from '../../repos/products'
import { productCodeParamSchema, type ProductListItem } from '../../../shared/utils/product'

export default defineEventHandler(async (event) => {
  await requireRole(event)
  const { code } = await getValidatedRouterParams(event, zodValidator(productCodeParamSchema))
  const product = await getProductByCode(useDb(), code)
  if (!product) throw new DomainError('product_not_found', `No product ${code}`)
  return product satisfies ProductListItem
})
