import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { signIn, useTestServer } from '../support/app'
import { startTestCluster, stopTestCluster } from '../support/cluster'
import { recordingVariant } from '../support/recordings'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

// Seeds 1600–1699 (this file's range).
const host = await useTestServer()
const STATIONS = 5
/** A station sends a unit this often (it waits for each answer first), so every station is busy through the gap. */
const CADENCE_MS = 250
/** How long PostgreSQL stays down: long enough for every station to meet the gap. */
const GAP_MS = 2500
/** A station gives up on one file after this long (the whole test stays bounded). */
const STATION_DEADLINE_MS = 40_000

let worker: RunningWorker
let clusterDown = false

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
})

afterAll(async () => {
  // Whatever happened above, the next test files find PostgreSQL running.
  if (clusterDown) await startTestCluster()
  await worker?.stop()
  await closeTestDb()
})

interface StationLog {
  accepted: number[]
  /** Every answer other than 202/200, with its code, e.g. "503 database_unavailable". */
  refusals: string[]
  networkErrors: number
}

/** A station as the station software behaves: one upload at a time, the same file again after a 503, with backoff. */
async function runStation(token: string, product: string, base: Uint8Array, stop: () => boolean): Promise<StationLog> {
  const log: StationLog = { accepted: [], refusals: [], networkErrors: 0 }
  for (let n = 1; !stop(); n++) {
    const bytes = recordingVariant(base, n)
    const serial = unique('DBR')
    const until = Date.now() + STATION_DEADLINE_MS
    for (let attempt = 0; Date.now() < until; attempt++) {
      try {
        const res = await postRecording(host, { token }, { serial, product }, { bytes, name: `${serial}.wav` })
        if (res.status === 202 || res.status === 200) {
          log.accepted.push(res.body.id)
          break
        }
        log.refusals.push(`${res.status} ${res.body.data?.code ?? '?'}`)
        if (res.status !== 503) break
      } catch {
        log.networkErrors++
      }
      await new Promise((r) => setTimeout(r, Math.min(1000, 100 * 2 ** attempt)))
    }
    await new Promise((r) => setTimeout(r, CADENCE_MS))
  }
  return log
}

describe('PostgreSQL restarts while stations upload', () => {
  it('answers 503 during the gap, recovers without a server restart, and every accepted upload ends done', async () => {
    const tech = { cookie: (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie }
    const product = await makeProduct(unique('P'), 6)
    const stations = await Promise.all(Array.from({ length: STATIONS }, () => makeStation()))
    const files = stations.map((_, s) => generateRecording({ seed: 1600 + s }))
    await closeTestDb()

    let stopping = false
    const running = stations.map((st, s) => runStation(st.token, product.code, files[s]!, () => stopping))
    // Let every station get something through first.
    await new Promise((r) => setTimeout(r, 1500))

    clusterDown = true
    await stopTestCluster()
    const health = await fetch(new URL('/api/health', host))
    expect(health.status).toBe(503)
    expect(health.headers.get('retry-after')).toBe('2')
    await new Promise((r) => setTimeout(r, GAP_MS))
    await startTestCluster()
    clusterDown = false

    // The same server process answers again; let the stations send a while longer, then stop.
    await expect.poll(async () => (await fetch(new URL('/api/health', host))).status, { timeout: 20_000, interval: 200 }).toBe(200)
    await new Promise((r) => setTimeout(r, 2000))
    stopping = true
    const logs = await Promise.all(running)

    const refusals = logs.flatMap((l) => l.refusals)
    console.log(`[db restart] accepted ${logs.reduce((n, l) => n + l.accepted.length, 0)}, refused during the gap ${refusals.length}`)
    // The gap was seen, and only as 503 database_unavailable: never a 500, never a lost connection.
    expect(refusals.length).toBeGreaterThan(0)
    expect(new Set(refusals)).toEqual(new Set(['503 database_unavailable']))
    expect(logs.map((l) => l.networkErrors)).toEqual(Array(STATIONS).fill(0))

    // Every station's retries went through once PostgreSQL was back.
    const accepted = logs.flatMap((l) => l.accepted)
    expect(new Set(accepted).size).toBe(accepted.length)
    expect(accepted.length).toBeGreaterThan(STATIONS)
    const finished = await Promise.all(accepted.map((id) => waitFinished(host, tech, id, 60_000)))
    expect(finished.filter((r) => r.status !== 'done').map((r) => `${r.id} ${r.status} ${r.error?.message ?? ''}`)).toEqual([])
    const rows = await testDb()('results').whereIn('recording_id', accepted).select('recording_id')
    expect(rows).toHaveLength(accepted.length)
    // The worker lived through the restart (its pools reconnected); nobody had to start it again.
    expect(worker.proc.exitCode).toBeNull()
  }, 120_000)
})
