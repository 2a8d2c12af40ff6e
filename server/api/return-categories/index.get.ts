import { listReturnCategories } from '../../repos/returns'
import { returnCategoryQuerySchema } from '../../../shared/utils/returns'
import type { ReturnCategoryView } from '../../../shared/types/returns'

/** Active categories for the register form; `?all=1` adds the inactive ones (the admins' editor). */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'support', 'quality', 'engineer')
  const { all } = await getValidatedQuery(event, zodValidator(returnCategoryQuerySchema))
  return (await listReturnCategories(useDb(), { includeInactive: all === '1' })) satisfies ReturnCategoryView[]
})
