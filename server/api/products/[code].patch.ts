import { updateProduct } from '../../repos/products'
import { productCodeParamSchema, productPatchSchema, type ProductListItem } from '../../../shared/utils/product'

/** Engineers edit a product; its code and rated impedance are fixed once units exist (409 product_in_use). */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(productCodeParamSchema))
  const changes = await readValidatedBody(event, zodValidator(productPatchSchema))
  const product = await updateProduct(useDb(), code, changes)
  if (!product) throw new DomainError('product_not_found', `No product ${code}`)
  return product satisfies ProductListItem
})
