import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const host = await useTestServer()
const UPLOADS = 50
let worker: RunningWorker

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
})

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

describe('many stations at once', () => {
  it(`takes ${UPLOADS} concurrent uploads and ends each done, with exactly one result each`, async () => {
    // The files first: making them blocks this process for seconds, and a keep-alive connection
    // left idle meanwhile (the sign-in's) may be closed by the server just as an upload reuses it.
    const files = Array.from({ length: UPLOADS }, (_, i) => generateRecording({ seed: 1000 + i }))
    const tech = { cookie: (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie }
    const product = await makeProduct(unique('P'), 6)
    const stations = await Promise.all([makeStation(), makeStation(), makeStation()])
    const serials = files.map(() => unique('CC'))

    const answers = await Promise.all(
      files.map((bytes, i) =>
        // Half by station token, half by a signed-in technician, spread over three stations.
        i % 2
          ? postRecording(host, { token: stations[i % 3]!.token }, { serial: serials[i], product: product.code }, { bytes, name: `${i}.wav` })
          : postRecording(host, tech, { serial: serials[i], product: product.code, station: stations[i % 3]!.id }, { bytes, name: `${i}.wav` }),
      ),
    )
    expect(answers.map((a) => a.status)).toEqual(Array(UPLOADS).fill(202))
    const ids = answers.map((a) => a.body.id)
    expect(new Set(ids).size).toBe(UPLOADS)

    const finished = await Promise.all(ids.map((id) => waitFinished(host, tech, id, 120_000)))
    expect(finished.map((r) => r.status)).toEqual(Array(UPLOADS).fill('done'))
    expect(finished.map((r) => r.serial)).toEqual(serials)

    const rows = await testDb()('results').whereIn('recording_id', ids).select('recording_id')
    expect(rows).toHaveLength(UPLOADS)
    expect(new Set(rows.map((r: { recording_id: string }) => Number(r.recording_id))).size).toBe(UPLOADS)
  }, 180_000)
})
