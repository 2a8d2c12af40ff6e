import { editProduct } from '../../services/products'
import { productCodeParamSchema, productPatchSchema, type ProductListItem } from '../../../shared/utils/product'

/** Engineers edit a product; its code and rated impedance are fixed once units exist (409 product_in_use). */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(productCodeParamSchema))
  const changes = await readValidatedBody(event, zodValidator(productPatchSchema))
  return (await editProduct(useDb(), code, changes)) satisfies ProductListItem
})
