// access: public (load balancers and the test setup ask it without a session)
import type { HealthResponse } from '../../shared/types/api'
import { pingDatabase } from '../repos/health'
import { RETRY_AFTER_S } from '../utils/errors'

const DB_TIMEOUT_MS = 2000

export default defineEventHandler(async (event) => {
  const version = useRuntimeConfig(event).appVersion as string
  const started = performance.now()
  let dbOk = false
  try {
    await Promise.race([
      pingDatabase(useDb()),
      new Promise((_, reject) => setTimeout(() => reject(new Error('timeout')), DB_TIMEOUT_MS)),
    ])
    dbOk = true
  } catch {
    dbOk = false
  }
  const body = {
    ok: dbOk,
    version,
    database: { ok: dbOk, latencyMs: dbOk ? Math.round((performance.now() - started) * 10) / 10 : null },
  } satisfies HealthResponse
  if (!dbOk) {
    // A load balancer takes this server out of rotation; a station waits and sends again.
    setResponseStatus(event, 503)
    setResponseHeader(event, 'retry-after', RETRY_AFTER_S)
  }
  return body
})
