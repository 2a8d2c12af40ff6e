import { getLotReport } from '../../services/lot-report'
import { lotParamSchema } from '../../../shared/utils/reports'
import type { LotReport } from '../../../shared/types/reports'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'quality', 'engineer', 'support')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const report = await getLotReport(useDb(), code)
  if (!report) throw new DomainError('unknown_lot', `No lot ${code}`)
  return report satisfies LotReport
})
