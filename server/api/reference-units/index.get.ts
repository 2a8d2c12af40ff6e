import { z } from 'zod'
import { listReferenceUnits } from '../../repos/reference-units'
import { codeSchema } from '../../../shared/utils/ids'
import type { ReferenceUnitView } from '../../../shared/types/api'

const querySchema = z.object({ product: codeSchema.optional(), retired: z.enum(['0', '1']).default('0') })

/** Reference units in force (and retired ones with ?retired=1): every role reads them, so the bench knows a reference serial. */
export default defineEventHandler(async (event) => {
  await requireRole(event)
  const q = await getValidatedQuery(event, zodValidator(querySchema))
  return (await listReferenceUnits(useDb(), { productCode: q.product, includeRetired: q.retired === '1' })) satisfies ReferenceUnitView[]
})
