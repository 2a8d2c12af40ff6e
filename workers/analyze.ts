/**
 * The analysis worker: takes `analyse-recording` jobs from pg-boss and turns each stored recording
 * into a result. Run it as often as you like, on as many machines as you like, against the same
 * database:  node --import tsx workers/analyze.ts
 *
 * A job whose worker dies is expired by pg-boss and retried by another (or the restarted) worker;
 * a recording that keeps failing ends `failed` with its error.
 */
import { resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import knex, { type Knex } from 'knex'
import type PgBoss from 'pg-boss'
import { knexConfig } from '../knexfile'
import { loadConfig } from '../server/utils/config'
import { ANALYZE_QUEUE, createBoss, ensureQueue, type AnalyzeJob } from '../server/queue/index'
import { getRecording } from '../server/repos/recordings'
import { failForGood, failRecordingsWithoutJob, isLastTry, ORPHAN_SWEEP_MS } from '../server/queue/retries'
import { processRecording } from '../server/services/analyze'
import { evaluateAlerts } from '../server/services/alerts'
import { directoryStorage } from '../server/storage/recordings'
import { isDatabaseUnavailable } from '../server/utils/db'

/** Jobs fetched per poll: pg-boss waits its polling interval between fetches, so one job a fetch would cap throughput. */
const BATCH_SIZE = 8

/**
 * Points where a test entry (tests/support/worker-entry.ts) can stall the worker, so a test can
 * kill it at a chosen moment. The production entry passes none.
 */
export interface WorkerHooks {
  /** Before the recording is analysed (the job is taken, nothing written yet). */
  beforeJob?: (recordingId: number, db: Knex) => Promise<void>
  /** After the result is saved, before the queue hears the job is complete. */
  afterResult?: (recordingId: number, db: Knex) => Promise<void>
}

function log(msg: string) {
  console.log(`[worker ${process.pid}] ${msg}`)
}

/** Starts the analysis worker in this process: listens for jobs until SIGINT/SIGTERM. */
export async function runAnalyzeWorker(hooks: WorkerHooks = {}): Promise<void> {
  const cfg = loadConfig()
  const db = knex(knexConfig(cfg.databaseUrl))
  const storage = directoryStorage(cfg.dataDir)
  const boss = createBoss(cfg.databaseUrl, { supervise: true })
  const concurrency = Math.max(1, Number(process.env.CONETRAIL_WORKER_CONCURRENCY) || 2)

  async function handle(job: PgBoss.JobWithMetadata<AnalyzeJob>) {
    const id = job.data.recordingId
    await hooks.beforeJob?.(id, db)
    try {
      const outcome = await processRecording(db, storage, id)
      if (outcome !== 'skipped') log(`recording ${id}: ${outcome}`)
      if (outcome === 'done') {
        await hooks.afterResult?.(id, db)
        await checkAlerts(id)
      }
    } catch (err) {
      const message = err instanceof Error ? err.message : String(err)
      if (isDatabaseUnavailable(err)) {
        // Nothing can be recorded now. Throwing hands the whole batch back to pg-boss, which fails
        // it when the database answers again (or lets it expire): each job is retried, and the
        // ones already done are skipped by processRecording.
        log(`recording ${id}: database unreachable, the job will be retried: ${message}`)
        throw err
      }
      if (isLastTry(job)) {
        await failForGood(db, id)
        log(`recording ${id}: failed for good after ${job.retryCount + 1} tries: ${message}`)
        return
      }
      log(`recording ${id}: try ${job.retryCount + 1} failed, will retry: ${message}`)
      // Only this job goes back to the queue; the others of its batch complete normally.
      await boss.fail(ANALYZE_QUEUE, job.id, { message })
    }
  }

  /** Alert rules after a saved result. Never throws: an alert or mail failure must not fail (or retry) the analysis. */
  async function checkAlerts(recordingId: number) {
    try {
      const rec = await getRecording(db, recordingId)
      if (!rec) return
      for (const c of await evaluateAlerts(db, { unitId: Number(rec.unit_id) }, { log })) log(`alert ${c.alertId} (${c.kind}): ${c.change}`)
    } catch (err) {
      log(`alerts after recording ${recordingId}: ${err instanceof Error ? err.message : String(err)}`)
    }
  }

  async function sweepOrphans() {
    try {
      const n = await failRecordingsWithoutJob(db, ANALYZE_QUEUE)
      if (n) log(`${n} recording(s) whose analysis stopped for good marked failed`)
    } catch (err) {
      log(`orphan sweep: ${err instanceof Error ? err.message : String(err)}`)
    }
  }

  let stopping = false
  async function stop() {
    if (stopping) return
    stopping = true
    await boss.stop({ graceful: true, wait: true, timeout: 10_000 }).catch(() => {})
    await db.destroy()
    process.exit(0)
  }
  process.on('SIGINT', stop)
  process.on('SIGTERM', stop)
  // pg-boss completes and fails jobs without awaiting the promise: while PostgreSQL restarts those
  // calls reject with nobody to catch them. The job then stays active and expires into a retry, so
  // the worker logs it and carries on; any other unhandled rejection still ends the process.
  process.on('unhandledRejection', (reason) => {
    if (isDatabaseUnavailable(reason)) {
      log(`queue call lost while the database was unreachable (the job will expire and be retried): ${reason instanceof Error ? reason.message : String(reason)}`)
      return
    }
    log(`unhandled rejection: ${reason instanceof Error ? (reason.stack ?? reason.message) : String(reason)}`)
    process.exit(1)
  })

  // pg-boss reports a lost database connection here and keeps polling: once PostgreSQL is back
  // (a restart, a failover), the pools reconnect and work resumes without restarting the worker.
  boss.on('error', (err) => log(`queue error: ${err.message}`))
  await boss.start()
  await ensureQueue(boss)
  for (let i = 0; i < concurrency; i++) {
    await boss.work<AnalyzeJob>(ANALYZE_QUEUE, { batchSize: BATCH_SIZE, includeMetadata: true, pollingIntervalSeconds: 0.5 }, async (jobs) => {
      for (const job of jobs) await handle(job)
    })
  }
  await sweepOrphans()
  setInterval(() => void sweepOrphans(), ORPHAN_SWEEP_MS).unref()
  log(`waiting for recordings (${concurrency} at a time)`)
}

if (resolve(process.argv[1] ?? '') === fileURLToPath(import.meta.url)) {
  runAnalyzeWorker().catch((err: unknown) => {
    log(`cannot start: ${err instanceof Error ? err.message : String(err)}`)
    process.exit(1)
  })
}
