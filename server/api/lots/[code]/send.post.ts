import { mailLotReport } from '../../../services/exports'
import { lotParamSchema } from '../../../../shared/utils/reports'
import { sendLotReportSchema, type LotReportSent } from '../../../../shared/utils/lot-report-mail'

/** E-mails the lot report PDF to 1–20 recipients (quality and engineers). 503 when mail cannot go out. */
export default defineEventHandler(async (event) => {
  const user = await requireActor(event, 'quality', 'engineer')
  const { code } = await getValidatedRouterParams(event, zodValidator(lotParamSchema))
  const input = await readValidatedBody(event, zodValidator(sendLotReportSchema))
  const sent = await mailLotReport(useDb(), code, input, user)
  return sent satisfies LotReportSent
})
