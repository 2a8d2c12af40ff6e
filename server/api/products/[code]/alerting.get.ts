import { getProductAlerting } from '../../../services/products'
import { productCodeParamSchema } from '../../../../shared/utils/product'
import type { AlertingView } from '../../../../shared/utils/alerts'

/** A product's alert rules and the addresses mailed when an alert opens. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(productCodeParamSchema))
  return (await getProductAlerting(useDb(), code)) satisfies AlertingView
})
