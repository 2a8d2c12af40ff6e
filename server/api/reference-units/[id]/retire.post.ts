import { retireReference } from '../../../services/reference-units'
import { idParamSchema } from '../../../../shared/utils/ids'
import { referenceRetireSchema } from '../../../../shared/utils/reference-units'
import type { ReferenceUnitView } from '../../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event, 'engineer')
  const { id } = await getValidatedRouterParams(event, zodValidator(idParamSchema))
  const { comment } = await readValidatedBody(event, zodValidator(referenceRetireSchema))
  return (await retireReference(useDb(), id, user.id, comment)) satisfies ReferenceUnitView
})
