import { searchUnits } from '../../services/units'
import { unitSearchQuerySchema } from '../../../shared/utils/units'
import type { UnitSearchAnswer } from '../../../shared/types/units'

/** Finds a unit by full serial, prefix or scanned barcode (any signed-in role). */
export default defineEventHandler(async (event) => {
  await requireRole(event)
  const { q } = await getValidatedQuery(event, zodValidator(unitSearchQuerySchema))
  return (await searchUnits(useDb(), q)) satisfies UnitSearchAnswer
})
