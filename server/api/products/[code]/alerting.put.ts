import { setProductAlerting } from '../../../services/products'
import { productCodeParamSchema } from '../../../../shared/utils/product'
import { alertingSchema, type AlertingView } from '../../../../shared/utils/alerts'

/** Replaces a product's alert rules and subscribers (quality and engineers). */
export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(productCodeParamSchema))
  const input = await readValidatedBody(event, zodValidator(alertingSchema))
  return (await setProductAlerting(useDb(), code, input, user.id)) satisfies AlertingView
})
