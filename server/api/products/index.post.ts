import { createProduct, getProductById } from '../../repos/products'
import { productCreateSchema, type ProductListItem } from '../../../shared/utils/product'

/** Engineers add a driver model: 201 with the product, 409 duplicate_product for a code in use. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const body = await readValidatedBody(event, zodValidator(productCreateSchema))
  const db = useDb()
  const id = await createProduct(db, body)
  setResponseStatus(event, 201)
  return (await getProductById(db, id))! satisfies ProductListItem
})
