import { getProduct } from '../../services/products'
import { productCodeParamSchema, type ProductListItem } from '../../../shared/utils/product'

export default defineEventHandler(async (event) => {
  await requireRole(event)
  const { code } = await getValidatedRouterParams(event, zodValidator(productCodeParamSchema))
  return (await getProduct(useDb(), code)) satisfies ProductListItem
})
