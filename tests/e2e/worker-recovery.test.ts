import { rmSync } from 'node:fs'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { RETRY_LIMIT } from '../../server/queue/index'
import { FAILED_FOR_GOOD_MESSAGE } from '../../server/queue/retries'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { getRecording, postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

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

describe('an accepted upload is never lost', () => {
  it('completes the job after its worker is killed mid-job and a worker starts again', async () => {
    const product = await makeProduct(unique('P'), 6)
    const station = await makeStation()
    const stalled = startWorker({ stall: 'before' })
    workers.push(stalled)
    await stalled.ready

    const up = await postRecording(host, tech, { serial: unique('KILL'), product: product.code, station: station.id }, { bytes: generateRecording({ seed: 201 }), name: 'k.wav' })
    expect(up.status).toBe(202)
    // The stalled worker has taken the job: the recording reads "analysing" and stays there.
    await expect.poll(async () => (await getRecording(host, tech, up.body.id)).body.status, { timeout: 15_000 }).toBe('analysing')

    await stalled.stop('SIGKILL')
    const fresh = startWorker()
    workers.push(fresh)
    await fresh.ready

    // pg-boss expires the dead worker's job (CONETRAIL_JOB_EXPIRE_S=3 in tests) and the new worker retries it.
    const rec = await waitFinished(host, tech, up.body.id, 45_000)
    expect(rec.status).toBe('done')
    expect(rec.parameters?.fsHz).toBeGreaterThan(0)
    const results = await testDb()('results').where({ recording_id: up.body.id })
    expect(results).toHaveLength(1)
  }, 90_000)

  it('ends a recording that keeps failing as failed, with its error, after the retries', async () => {
    for (const w of workers) await w.stop()
    const product = await makeProduct(unique('P'), 6)
    const station = await makeStation()
    const up = await postRecording(host, tech, { serial: unique('LOST'), product: product.code, station: station.id }, { bytes: generateRecording({ seed: 202 }), name: 'l.wav' })
    expect(up.status).toBe(202)
    // Simulate storage trouble the worker cannot get past: the stored file disappears.
    const { storage_key: key } = await testDb()('recordings').where({ id: up.body.id }).first()
    rmSync(join(inject('dataDir'), 'recordings', key))
    const w = startWorker()
    workers.push(w)
    await w.ready
    const rec = await waitFinished(host, tech, up.body.id, 60_000)
    expect(rec.status).toBe('failed')
    expect(rec.error?.code).toBe('analysis_failed')
    // The cause stays in the worker's log: the API shows neither the file's path nor the system's error text.
    expect(rec.error?.message).toBe(FAILED_FOR_GOOD_MESSAGE)
    expect(rec.error?.message).not.toMatch(/ENOENT|no such file|recordings\//i)
    const { attempts } = await testDb()('recordings').where({ id: up.body.id }).first()
    expect(attempts).toBe(RETRY_LIMIT + 1)
  }, 90_000)
})
