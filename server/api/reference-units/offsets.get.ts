import { z } from 'zod'
import { getStationOffsets } from '../../services/station-checks'
import { codeSchema } from '../../../shared/utils/ids'

const querySchema = z.object({ product: codeSchema })

/** Station against station: each station's offset per figure from the product's reference units, with 95 % intervals. */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'engineer', 'quality')
  const { product } = await getValidatedQuery(event, zodValidator(querySchema))
  return getStationOffsets(useDb(), product)
})
