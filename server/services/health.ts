import type { Knex } from 'knex'
import { pingDatabase } from '../repos/health'

/** How long a health probe waits for the database before calling it down. */
const DB_TIMEOUT_MS = 2000

/** Whether the database answers within DB_TIMEOUT_MS, and how fast (ms, one decimal); never throws. */
export async function databaseHealth(db: Knex): Promise<{ ok: boolean; latencyMs: number | null }> {
  const started = performance.now()
  let timer: NodeJS.Timeout | undefined
  const timeout = new Promise<never>((_, reject) => {
    timer = setTimeout(() => reject(new Error('timeout')), DB_TIMEOUT_MS)
  })
  const ok = await Promise.race([pingDatabase(db), timeout]).then(
    () => true,
    () => false,
  )
  clearTimeout(timer)
  return { ok, latencyMs: ok ? Math.round((performance.now() - started) * 10) / 10 : null }
}
