import type { MeResponse } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const user = await requireRole(event)
  return { user } satisfies MeResponse
})
