import type { Knex } from 'knex'
import PgBoss from 'pg-boss'
import { jobExpirySeconds, queueRetryPolicy } from './retries'

/**
 * The one queue: analyze an accepted recording. Jobs carry only the recording id (idempotent).
 * The queue's stored name keeps its first spelling: jobs already queued under it must still be taken.
 */
export const ANALYZE_QUEUE = 'analyse-recording'

export interface AnalyzeJob {
  recordingId: number
}

// The retry policy and its accounting live in retries.ts; re-exported for the queue's callers.
export { jobExpirySeconds, RETRY_LIMIT } from './retries'

export interface BossOptions {
  /** Run maintenance (expiry of jobs whose worker died, archiving). Workers do; the web server does not. */
  supervise?: boolean
}

export function createBoss(databaseUrl: string, opts: BossOptions = {}): PgBoss {
  const maintenance = Number(process.env.CONETRAIL_QUEUE_MAINTENANCE_S) || 10
  return new PgBoss({
    connectionString: databaseUrl,
    max: 4,
    supervise: opts.supervise ?? false,
    schedule: false,
    maintenanceIntervalSeconds: maintenance,
  })
}

/** Creates the queue with its policy when absent (pg-boss 10 needs a queue before send). */
export async function ensureQueue(boss: PgBoss): Promise<void> {
  const existing = await boss.getQueue(ANALYZE_QUEUE)
  if (existing) return
  await boss.createQueue(ANALYZE_QUEUE, { name: ANALYZE_QUEUE, ...queueRetryPolicy() })
}

/** Enqueues inside the caller's transaction, so the job exists exactly when the recording row does. */
export async function enqueueAnalysis(boss: PgBoss, trx: Knex.Transaction, recordingId: number): Promise<void> {
  const conn = (await trx.client.acquireConnection()) as { query: (text: string, values?: unknown[]) => Promise<{ rows: unknown[] }> }
  await boss.send(ANALYZE_QUEUE, { recordingId } satisfies AnalyzeJob, {
    expireInSeconds: jobExpirySeconds(),
    db: { executeSql: (text: string, values: unknown[]) => conn.query(text, values) },
  } as PgBoss.SendOptions)
}
