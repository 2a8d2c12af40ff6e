import type { HealthResponse } from '../../shared/types/api'

const DB_TIMEOUT_MS = 2000

export default defineEventHandler(async (event) => {
  const version = useRuntimeConfig(event).appVersion as string
  const started = performance.now()
  let dbOk = false
  try {
    await Promise.race([
      useDb().raw('select 1'),
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
  if (!dbOk) setResponseStatus(event, 503)
  return body
})
