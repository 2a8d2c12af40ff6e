import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { ANALYZE_QUEUE } from '../../server/queue/index'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

// Seeds 1500–1549 (this file's range).
const host = await useTestServer()
const workers: RunningWorker[] = []
let tech: { cookie: string }

beforeAll(async () => {
  tech = { cookie: (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie }
})

afterAll(async () => {
  for (const w of workers) await w.stop('SIGKILL')
  await closeTestDb()
})

async function launch(opts: Parameters<typeof startWorker>[0] = {}) {
  const w = startWorker(opts)
  workers.push(w)
  await w.ready
  return w
}

async function resultCount(recordingId: number): Promise<number> {
  const [{ n }] = await testDb()('results').where({ recording_id: recordingId }).count({ n: '*' })
  return Number(n)
}

async function jobStates(recordingId: number): Promise<string[]> {
  const rows = await testDb()('pgboss.job').where({ name: ANALYZE_QUEUE }).whereRaw("(data->>'recordingId')::bigint = ?", [recordingId]).select('state')
  return rows.map((r: { state: string }) => r.state)
}

describe('SIGKILL of a worker in the middle of a job', () => {
  it('results carry a unique recording id, so no recording can hold two results', async () => {
    const rows = await testDb().raw(`
      SELECT count(*)::int AS n FROM pg_constraint c
      JOIN pg_class t ON t.oid = c.conrelid
      JOIN pg_attribute a ON a.attrelid = t.oid AND a.attnum = ANY (c.conkey)
      WHERE t.relname = 'results' AND c.contype = 'u' AND a.attname = 'recording_id' AND array_length(c.conkey, 1) = 1`)
    expect(rows.rows[0].n).toBe(1)
  })

  it('killed after saving the result but before completing the job: the retry finds the result and writes no second one', async () => {
    const product = await makeProduct(unique('P'), 6)
    const station = await makeStation()
    const stalled = await launch({ stall: 'after' })
    const up = await postRecording(host, tech, { serial: unique('WK'), product: product.code, station: station.id }, { bytes: generateRecording({ seed: 1500 }), name: 'wk.wav' })
    expect(up.status).toBe(202)
    expect(await stalled.stalled).toBe(up.body.id)
    // The result is saved and the job is still active in the queue when the worker dies.
    expect(await resultCount(up.body.id)).toBe(1)
    expect(await jobStates(up.body.id)).toEqual(['active'])
    await stalled.stop('SIGKILL')

    await launch()
    // pg-boss expires the dead worker's job (CONETRAIL_JOB_EXPIRE_S=3 in tests); the new worker takes it and finds the work done.
    await expect.poll(() => jobStates(up.body.id), { timeout: 45_000, interval: 250 }).toEqual(['completed'])
    expect(await resultCount(up.body.id)).toBe(1)
    const rec = await testDb()('recordings').where({ id: up.body.id }).first()
    expect(rec.status).toBe('done')
    expect(rec.attempts).toBe(1)
    for (const w of workers) await w.stop()
  }, 90_000)

  it('killed while analysing a batch: every recording ends done with exactly one result', async () => {
    const product = await makeProduct(unique('P'), 6)
    const station = await makeStation()
    const N = 8
    const ups: number[] = []
    // The uploads wait in the queue first, so the worker takes them as one batch.
    for (let i = 0; i < N; i++) {
      const up = await postRecording(host, tech, { serial: unique('WB'), product: product.code, station: station.id }, { bytes: generateRecording({ seed: 1510 + i }), name: `wb${i}.wav` })
      expect(up.status).toBe(202)
      ups.push(up.body.id)
    }
    const first = await launch()
    // Kill as soon as the first result exists: the rest of the batch is taken and not finished.
    await expect.poll(async () => (await testDb()('results').whereIn('recording_id', ups).count({ n: '*' }))[0]!.n, { timeout: 30_000, interval: 20 }).not.toBe('0')
    await first.stop('SIGKILL')
    const doneAtKill = Number((await testDb()('results').whereIn('recording_id', ups).count({ n: '*' }))[0]!.n)
    expect(doneAtKill).toBeLessThan(N)

    await launch()
    const finished = await Promise.all(ups.map((id) => waitFinished(host, tech, id, 60_000)))
    expect(finished.map((r) => r.status)).toEqual(Array(N).fill('done'))
    const rows = await testDb()('results').whereIn('recording_id', ups).select('recording_id')
    expect(rows).toHaveLength(N)
    expect(new Set(rows.map((r: { recording_id: string }) => r.recording_id)).size).toBe(N)
  }, 120_000)
})
