/**
 * npm run bench:ingest — the server and one worker on this machine, N recordings posted by C
 * concurrent clients (station tokens), each followed until its result exists.
 * Two phases: saturation (stations send as fast as they are accepted: the worker's capacity in
 * units/s) and a paced line at BENCH_RATE units/s (latency from the start of an upload to its stored
 * result, p50 and p95). Ends with
 *   ingest units_per_s=<capacity> p50_ms=<paced p50> p95_ms=<paced p95> lost=<n>
 * Options: BENCH_N (default 400), BENCH_CLIENTS (default 8), BENCH_RATE (default 20),
 * BENCH_BUILD=0 to reuse the last build.
 */
import { resolve } from 'node:path'
import knex from 'knex'
import { DEFAULT_PROFILE } from '../server/analysis/index'
import { createProduct } from '../server/repos/products'
import { createStation } from '../server/repos/stations'
import { createMaskDraft, releaseMask } from '../server/repos/masks'
import { DEFAULTS, loadConfig } from '../server/utils/config'
import { generateRecording } from '../fixtures/generator'
import { startStack } from './stack'

const N = Number(process.env.BENCH_N) || 400
const CLIENTS = Number(process.env.BENCH_CLIENTS) || 8
const DISTINCT_FILES = 40
/** Paced phase: units per second and duration (a plant of twenty lines makes about 4 units/s). */
const RATE = Number(process.env.BENCH_RATE) || 20
const PACED_S = 15

/**
 * A copy of a recording that differs in the least significant bits of its last two samples (the
 * data chunk ends the file): each upload is a new file, since the same bytes are refused for a
 * second unit, and the change (below 2^-15 of full scale, in the silence after the sweep) is lost in the noise.
 */
function distinct(wav: Buffer, n: number): Uint8Array<ArrayBuffer> {
  const copy = new Uint8Array(new ArrayBuffer(wav.length))
  copy.set(wav)
  copy[copy.length - 3] = n & 0xff
  copy[copy.length - 6] = (n >> 8) & 0xff
  return copy
}

function percentile(sorted: number[], p: number): number {
  if (!sorted.length) return NaN
  const i = Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1))
  return sorted[i]!
}

async function main() {
  const stack = await startStack({
    dataDir: resolve(loadConfig().dataDir, 'bench'),
    pgPort: (Number(process.env.PGPORT) || DEFAULTS.pgPort) + 2,
    database: 'conetrail_bench',
    build: process.env.BENCH_BUILD !== '0',
  })
  const db = knex({ client: 'pg', connection: stack.databaseUrl, pool: { min: 0, max: 2 } })
  try {
    const productId = await createProduct(db, { code: 'BENCH-6', name: 'Benchmark driver', ratedImpedanceOhm: 6 })
    const mask = await createMaskDraft(db, {
      productId,
      name: 'bench',
      limits: { scalars: { fsHz: { low: 20, high: 80 } }, polarityNormal: true, ratedImpedanceRule: true, curves: {} },
      createdBy: null,
    })
    await releaseMask(db, mask, { by: null, comment: 'benchmark' })
    const stations = await Promise.all(Array.from({ length: CLIENTS }, (_, i) => createStation(db, { name: `Bench station ${i + 1}`, line: 'bench', profile: DEFAULT_PROFILE, createdBy: null })))
    // Files are made before the clock starts; serials differ, so every upload is a new recording.
    const files = Array.from({ length: DISTINCT_FILES }, (_, i) => generateRecording({ seed: 5000 + i }))
    const worker = stack.startWorker({}, 'ignore')
    await new Promise((r) => setTimeout(r, 1500))

    const phase = async (label: string, count: number, ratePerS: number | null) => {
      const sentAt = new Map<number, number>()
      let next = 0
      let refused = 0
      const t0 = Date.now()
      await Promise.all(
        stations.map(async (st) => {
          while (next < count) {
            const i = next++
            // Paced phase: upload i leaves at t0 + i/rate, as a line of stations would send them.
            if (ratePerS) await new Promise((r) => setTimeout(r, Math.max(0, t0 + (i * 1000) / ratePerS - Date.now())))
            const form = new FormData()
            form.append('serial', `${label}-${String(i).padStart(6, '0')}`)
            form.append('product', 'BENCH-6')
            form.append('file', new Blob([distinct(files[i % DISTINCT_FILES]!, (ratePerS ? 50_000 : 0) + i)]), `${i}.wav`)
            const started = Date.now()
            const res = await fetch(new URL('/api/recordings', stack.baseUrl), { method: 'POST', headers: { authorization: `Bearer ${st.token}` }, body: form })
            const body = (await res.json()) as { id: number }
            if (res.status === 202) sentAt.set(body.id, started)
            else refused++
          }
        }),
      )
      const acceptedS = (Date.now() - t0) / 1000
      const ids = [...sentAt.keys()]
      const deadline = Date.now() + 300_000
      let done: { recording_id: string; created: Date }[] = []
      while (Date.now() < deadline) {
        done = await db('results').whereIn('recording_id', ids).select('recording_id', 'created_at as created')
        const finished = await db('recordings').whereIn('id', ids).whereIn('status', ['done', 'rejected', 'failed']).count<{ c: string }[]>({ c: '*' })
        if (Number(finished[0]!.c) >= ids.length) break
        await new Promise((r) => setTimeout(r, 100))
      }
      const lastS = (Math.max(...done.map((d) => d.created.getTime())) - t0) / 1000
      const latencies = done.map((d) => d.created.getTime() - sentAt.get(Number(d.recording_id))!).sort((a, b) => a - b)
      const r = {
        unitsPerS: done.length / lastS,
        p50: percentile(latencies, 50),
        p95: percentile(latencies, 95),
        lost: ids.length - done.length,
      }
      console.log(`${label}: ${count} posted by ${CLIENTS} clients${ratePerS ? ` at ${ratePerS}/s` : ' as fast as accepted'}, ${ids.length} accepted (${(ids.length / acceptedS).toFixed(1)}/s), ${refused} refused`)
      console.log(`${label}: ${done.length} results in ${lastS.toFixed(1)} s = ${r.unitsPerS.toFixed(1)} units/s; upload→result p50 ${r.p50} ms, p95 ${r.p95} ms, max ${latencies.at(-1)} ms, lost ${r.lost}`)
      return r
    }

    // Capacity: stations send as fast as the server accepts; the worker's throughput is the result.
    const capacity = await phase('SAT', N, null)
    // Latency: a steady line at RATE units/s, below capacity, as a plant would send them.
    const paced = await phase('PACE', Math.round(RATE * PACED_S), RATE)
    worker.kill('SIGTERM')
    console.log(
      `ingest units_per_s=${capacity.unitsPerS.toFixed(1)} p50_ms=${paced.p50} p95_ms=${paced.p95} lost=${capacity.lost + paced.lost}`,
    )
  } finally {
    await db.destroy()
    await stack.stop()
  }
}

main().catch((err: unknown) => {
  console.error(err)
  process.exit(1)
})
