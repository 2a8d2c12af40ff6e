/**
 * Test-only entry of the analysis worker: the real worker (workers/analyze.ts) with a stall at a
 * chosen point, so a test can SIGKILL it there. Never used in production.
 *
 *   CONETRAIL_TEST_WORKER_STALL=before  takes the job, marks the recording analysing, then hangs
 *   CONETRAIL_TEST_WORKER_STALL=after   saves the result, then hangs before the job is completed
 *
 * The worker prints "stalled at <point> on recording <id>" when it reaches the stall.
 */
import { runAnalyzeWorker, type WorkerHooks } from '../../workers/analyze'

const stall = process.env.CONETRAIL_TEST_WORKER_STALL
const forever = () => new Promise<never>(() => {})
const say = (point: string, id: number) => console.log(`[worker ${process.pid}] stalled at ${point} on recording ${id}`)

const hooks: WorkerHooks = {}
if (stall === 'before') {
  hooks.beforeJob = async (id, db) => {
    await db('recordings').where({ id }).update({ status: 'analysing' })
    say('before', id)
    await forever()
  }
} else if (stall === 'after') {
  hooks.afterResult = async (id) => {
    say('after', id)
    await forever()
  }
}

runAnalyzeWorker(hooks).catch((err: unknown) => {
  console.log(`[worker ${process.pid}] cannot start: ${err instanceof Error ? err.message : String(err)}`)
  process.exit(1)
})
