import { listCauses } from '../../repos/causes'
import type { LikelyCause } from '../../../shared/types/reports'

/** Likely causes per failure class (trade knowledge, common practice); any signed-in role. */
export default defineEventHandler(async (event) => {
  await requireRole(event)
  return (await listCauses(useDb())) satisfies LikelyCause[]
})
