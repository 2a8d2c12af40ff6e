import { getProductByCode } from '../../../repos/products'
import { getAlerting } from '../../../services/alerts'
import { productCodeParamSchema } from '../../../../shared/utils/product'
import type { AlertingView } from '../../../../shared/utils/alerts'

/** A product's alert rules and the addresses mailed when an alert opens. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(productCodeParamSchema))
  const product = await getProductByCode(useDb(), code)
  if (!product) throw new DomainError('product_not_found', `No product ${code}`)
  return (await getAlerting(useDb(), product.id)) satisfies AlertingView
})
