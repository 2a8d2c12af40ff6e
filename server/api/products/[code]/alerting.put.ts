import { getProductByCode } from '../../../repos/products'
import { setAlerting } from '../../../services/alerts'
import { productCodeParamSchema } from '../../../../shared/utils/product'
import { alertingSchema, type AlertingView } from '../../../../shared/utils/alerts'

/** Replaces a product's alert rules and subscribers (quality and engineers). */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(productCodeParamSchema))
  const input = await readValidatedBody(event, zodValidator(alertingSchema))
  const product = await getProductByCode(useDb(), code)
  if (!product) throw new DomainError('product_not_found', `No product ${code}`)
  return (await setAlerting(useDb(), product.id, input, user.id)) satisfies AlertingView
})
