import { addProduct } from '../../services/products'
import { productCreateSchema, type ProductListItem } from '../../../shared/utils/product'

/** Engineers add a driver model: 201 with the product, 409 duplicate_product for a code in use. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const body = await readValidatedBody(event, zodValidator(productCreateSchema))
  const product = await addProduct(useDb(), body)
  setResponseStatus(event, 201)
  return product satisfies ProductListItem
})
