// access: public (load balancers and the test setup ask it without a session)
import type { HealthResponse } from '../../shared/types/api'
import { databaseHealth } from '../services/health'
import { RETRY_AFTER_S } from '../utils/errors'

export default defineEventHandler(async (event) => {
  const database = await databaseHealth(useDb())
  if (!database.ok) {
    // A load balancer takes this server out of rotation; a station waits and sends again.
    setResponseStatus(event, 503)
    setResponseHeader(event, 'retry-after', RETRY_AFTER_S)
  }
  return { ok: database.ok, version: useRuntimeConfig(event).appVersion as string, database } satisfies HealthResponse
})
