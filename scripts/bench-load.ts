/**
 * npm run bench:load — a plant at full tilt on this machine: BENCH_STATIONS (30) simulated stations,
 * each sending a new recording every BENCH_PERIOD_MS (200 ms) for BENCH_SECONDS (60 s), waiting for
 * each answer and sending the same file again after a 503 or 429 with backoff, as station software
 * does; plus BENCH_BROWSERS (10) people reading reports in a loop (lot list, lot report, dashboard,
 * unit lookup); BENCH_WORKERS (2) analysis workers. Then it waits for the queue to drain (at most
 * BENCH_DRAIN_S, 900 s) and prints accepted uploads, errors, upload-to-verdict latency and the
 * peak memory of the server and of each worker, ending with exactly one line
 *   load accepted=<n> errors=<n> lost=<n> p95_ms=<x> peak_rss_mb=<server> worker_peak_rss_mb=<w1>,<w2>,...
 * Its own stack: .data/bench-load, PostgreSQL on PGPORT + 4. BENCH_BUILD=0 reuses the last build.
 *
 * Large uploads: BENCH_UPLOAD_MB=64 sends recordings of just under that many MiB (BENCH_RATE,
 * 192 kHz by default, 3 channels, 32-bit PCM: the longest sweep the analysis reads at that rate, then
 * silence up to the size), BENCH_STATIONS
 * (8 in this mode) at a time, BENCH_UPLOADS (3) per station, one right after the other's answer;
 * the server runs with CONETRAIL_MAX_UPLOAD_MB raised to fit them. Peak memory is the figure to read.
 */
import { readFileSync, rmSync } from 'node:fs'
import { resolve } from 'node:path'
import knex from 'knex'
import { ANALYSIS_TAIL_S, DEFAULT_PROFILE, MAX_ANALYSIS_FRAMES, stationProfileSchema, type StationProfile } from '../server/analysis/index'
import { createProduct } from '../server/repos/products'
import { createStation } from '../server/repos/stations'
import { createMaskDraft, releaseMask } from '../server/repos/masks'
import { DEFAULTS, loadConfig } from '../server/utils/config'
import { DEMO_PASSWORD, demoEmail } from '../seeds/01-demo-users'
import { generateRecording } from '../fixtures/generator'
import { startStack } from './stack'

/** MiB per upload in the large-upload mode; 0: the usual 0.6 MB recording of the demo profile. */
const UPLOAD_MB = Number(process.env.BENCH_UPLOAD_MB) || 0
const STATIONS = Number(process.env.BENCH_STATIONS) || (UPLOAD_MB ? 8 : 30)
const PERIOD_MS = Number(process.env.BENCH_PERIOD_MS) || (UPLOAD_MB ? 1 : 200)
/** Uploads per station (the large-upload mode stops after these; the usual mode sends for BENCH_SECONDS). */
const UPLOADS = Number(process.env.BENCH_UPLOADS) || (UPLOAD_MB ? 3 : Number.POSITIVE_INFINITY)
const RATE = Number(process.env.BENCH_RATE) || 192_000
const SECONDS = Number(process.env.BENCH_SECONDS) || (UPLOAD_MB ? 120 : 60)
const BROWSERS = Number(process.env.BENCH_BROWSERS) || 10
const WORKERS = Number(process.env.BENCH_WORKERS) || 2
const DRAIN_S = Number(process.env.BENCH_DRAIN_S) || 900
/** A station gives one file up after this long without an answer it can use. */
const STATION_GIVE_UP_MS = 120_000
const LOTS = 6
/** Fixture seeds far from every test file's range (the stack has its own database anyway). */
const SEED_BASE = 100_000
const PRODUCT = 'LOAD-6'
/** Bytes per frame of the large recordings: 3 channels of 32-bit PCM. */
const LARGE_FRAME_BYTES = 12
const WAVE_HEADER_BYTES = 44
/** Pre-silence of the large mode's sweep, s. */
const LARGE_PRE_SILENCE_S = 0.05

/**
 * The station profile of the large-upload mode: the demo profile with the longest sweep the analysis
 * reads at RATE (MAX_ANALYSIS_FRAMES less pre-silence and tail: 4.9 s at 192 kHz), so each upload
 * costs a worker the most one recording can.
 */
function largeProfile(): StationProfile {
  const durationS = Math.floor((MAX_ANALYSIS_FRAMES / RATE - LARGE_PRE_SILENCE_S - ANALYSIS_TAIL_S) * 10) / 10
  return stationProfileSchema.parse({ ...DEFAULT_PROFILE, sweep: { ...DEFAULT_PROFILE.sweep, durationS, preSilenceS: LARGE_PRE_SILENCE_S } })
}

/** Silence after the large mode's sweep that brings its file to just under UPLOAD_MB MiB, s. */
function largePostSilenceS(profile: StationProfile): number {
  const frames = Math.floor((UPLOAD_MB * 1024 * 1024 - WAVE_HEADER_BYTES) / LARGE_FRAME_BYTES)
  return Math.floor((frames / RATE - LARGE_PRE_SILENCE_S - profile.sweep.durationS) * 10) / 10
}

/** A copy that differs in the least significant bits of its last samples: a new file each time (see bench-ingest). */
function variant(wav: Buffer, n: number): Uint8Array<ArrayBuffer> {
  const copy = new Uint8Array(new ArrayBuffer(wav.length))
  copy.set(wav)
  copy[copy.length - 3] = n & 0xff
  copy[copy.length - 6] = (n >> 8) & 0xff
  return copy
}

function percentile(sorted: number[], p: number): number {
  if (!sorted.length) return NaN
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1))]!
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms))

/** Resident memory of a process from /proc (Linux): the current and the peak (VmHWM), in MB. */
function memoryMb(pid: number): { rss: number; peak: number } {
  try {
    const status = readFileSync(`/proc/${pid}/status`, 'utf8')
    const kb = (field: string) => Number(new RegExp(`^${field}:\\s+(\\d+) kB`, 'm').exec(status)?.[1] ?? NaN)
    return { rss: kb('VmRSS') / 1024, peak: kb('VmHWM') / 1024 }
  } catch {
    return { rss: NaN, peak: NaN }
  }
}

interface StationTally {
  sentAt: Map<number, number>
  serials: string[]
  retried: Map<string, number>
  errors: string[]
}

async function main() {
  const dataDir = resolve(loadConfig().dataDir, 'bench-load')
  // The database starts empty each run; so do the stored recordings (about 1 GB a run).
  for (const dir of ['recordings', 'tmp']) rmSync(resolve(dataDir, dir), { recursive: true, force: true })
  const stack = await startStack({
    dataDir,
    pgPort: (Number(process.env.PGPORT) || DEFAULTS.pgPort) + 4,
    database: 'conetrail_load',
    build: process.env.BENCH_BUILD !== '0',
    env: UPLOAD_MB ? { CONETRAIL_MAX_UPLOAD_MB: String(UPLOAD_MB + 1) } : {},
  })
  const db = knex({ client: 'pg', connection: stack.databaseUrl, pool: { min: 0, max: 2 } })
  const url = (path: string) => new URL(path, stack.baseUrl)
  try {
    const productId = await createProduct(db, { code: PRODUCT, name: 'Load benchmark driver', ratedImpedanceOhm: 6 })
    const mask = await createMaskDraft(db, {
      productId,
      name: 'load',
      limits: { scalars: { fsHz: { low: 20, high: 80 } }, polarityNormal: true, ratedImpedanceRule: true, curves: {} },
      createdBy: null,
    })
    await releaseMask(db, mask, { by: null, comment: 'load benchmark' })
    const profile = UPLOAD_MB ? largeProfile() : DEFAULT_PROFILE
    const stations = await Promise.all(Array.from({ length: STATIONS }, (_, i) => createStation(db, { name: `Load station ${i + 1}`, line: `line ${(i % LOTS) + 1}`, profile, createdBy: null })))
    let bases: Buffer[]
    if (UPLOAD_MB) {
      // One large recording (generating it takes tens of seconds); every upload is a distinct copy of it.
      const postSilenceS = largePostSilenceS(profile)
      console.log(`generating one ${RATE / 1000} kHz, 3-channel, 32-bit recording of a ${profile.sweep.durationS} s sweep and ${postSilenceS} s after it...`)
      const big = generateRecording({ seed: SEED_BASE, profile, sampleRate: RATE, encoding: 'pcm32', postSilenceS })
      console.log(`  ${(big.length / 1048576).toFixed(1)} MiB`)
      bases = stations.map(() => big)
    } else {
      console.log(`generating ${STATIONS} recordings (one per station; each upload is a distinct copy)...`)
      bases = stations.map((_, i) => generateRecording({ seed: SEED_BASE + i }))
    }
    const workerPids = Array.from({ length: WORKERS }, () => stack.startWorker({}, 'ignore').pid!)
    await sleep(2000)
    // Signed in after the pause: generating a large recording blocks this process, and a connection
    // the server closed meanwhile would otherwise be reused.
    const cookies: string[] = []
    for (const role of ['quality', 'engineer'] as const) {
      const res = await fetch(url('/api/auth/login'), { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email: demoEmail(role), password: DEMO_PASSWORD }) })
      if (!res.ok) throw new Error(`sign-in as ${role} failed: ${res.status}`)
      cookies.push(res.headers.getSetCookie().map((c) => c.split(';')[0]).join('; '))
    }

    // VmHWM is the kernel's own peak; the sampled RSS is a cross-check.
    const pids = [stack.serverPid, ...workerPids]
    const peakSampled = new Map<number, number>(pids.map((p) => [p, 0]))
    const sampler = setInterval(() => {
      for (const p of pids) peakSampled.set(p, Math.max(peakSampled.get(p)!, memoryMb(p).rss))
    }, 250)
    const peakOf = (pid: number) => Math.max(memoryMb(pid).peak, peakSampled.get(pid)!)

    const t0 = Date.now()
    const end = t0 + SECONDS * 1000
    const tallies: StationTally[] = []
    const stationRuns = stations.map(async (st, s) => {
      const tally: StationTally = { sentAt: new Map(), serials: [], retried: new Map(), errors: [] }
      tallies.push(tally)
      // A unit is ready every PERIOD_MS; a station still waiting for an answer sends the next one
      // as soon as the answer comes (units do not pile up: the line waits for the station), and
      // stops when the minute is over.
      let due = t0
      for (let n = 1; n <= UPLOADS; n++) {
        if (due >= end || Date.now() >= end) break
        await sleep(due - Date.now())
        const serial = `LD${String(s + 1).padStart(2, '0')}-${String(n).padStart(5, '0')}`
        const bytes = variant(bases[s]!, s * 1000 + n)
        const started = Date.now()
        due = Math.max(due + PERIOD_MS, started)
        for (let attempt = 0; ; attempt++) {
          const form = new FormData()
          form.append('serial', serial)
          form.append('product', PRODUCT)
          form.append('lot', `LOAD-L${(s % LOTS) + 1}`)
          form.append('file', new Blob([bytes]), `${serial}.wav`)
          let status = 0
          let code = ''
          let id = 0
          try {
            const res = await fetch(url('/api/recordings'), { method: 'POST', headers: { authorization: `Bearer ${st.token}` }, body: form })
            status = res.status
            const body = (await res.json()) as { id?: number; data?: { code?: string } }
            id = body.id ?? 0
            code = body.data?.code ?? ''
          } catch (err) {
            code = err instanceof Error ? err.message : String(err)
          }
          if (status === 202 || status === 200) {
            tally.sentAt.set(id, started)
            tally.serials.push(serial)
            break
          }
          const retryable = status === 503 || status === 429 || status === 0
          if (!retryable || Date.now() - started > STATION_GIVE_UP_MS) {
            tally.errors.push(`${status} ${code}`)
            break
          }
          const key = `${status} ${code}`.trim()
          tally.retried.set(key, (tally.retried.get(key) ?? 0) + 1)
          await sleep(Math.min(2000, 200 * 2 ** attempt))
        }
      }
    })

    const pages = { lots: [] as number[], lot: [] as number[], dashboard: [] as number[], unit: [] as number[] }
    const pageErrors: string[] = []
    const browserRuns = Array.from({ length: BROWSERS }, async (_, b) => {
      const cookie = cookies[b % cookies.length]!
      for (let k = 0; Date.now() < end; k++) {
        const kind = (['lots', 'lot', 'dashboard', 'unit'] as const)[(k + b) % 4]!
        const serials = tallies.flatMap((t) => t.serials.slice(-3))
        const path =
          kind === 'lots' ? '/api/lots'
          : kind === 'lot' ? `/api/lots/LOAD-L${((k + b) % LOTS) + 1}`
          : kind === 'dashboard' ? '/api/dashboard'
          : serials.length ? `/api/units/${serials[(k * 7 + b) % serials.length]}` : '/api/lots'
        const t = performance.now()
        try {
          const res = await fetch(url(path), { headers: { cookie } })
          await res.arrayBuffer()
          // A lot not started yet answers 404: a person looking early, not an error of the server.
          if (res.ok || (res.status === 404 && kind === 'lot')) pages[kind].push(performance.now() - t)
          else pageErrors.push(`${kind} ${res.status}`)
        } catch (err) {
          pageErrors.push(`${kind} ${err instanceof Error ? err.message : String(err)}`)
        }
        // Someone reading the page before the next click.
        await sleep(300 + ((k * 37 + b * 11) % 400))
      }
    })
    await Promise.all([...stationRuns, ...browserRuns])
    const sendingS = (Date.now() - t0) / 1000

    const sentAt = new Map<number, number>()
    for (const t of tallies) for (const [id, at] of t.sentAt) sentAt.set(id, at)
    const ids = [...sentAt.keys()]
    const errors = tallies.flatMap((t) => t.errors)
    const retried = new Map<string, number>()
    for (const t of tallies) for (const [k, v] of t.retried) retried.set(k, (retried.get(k) ?? 0) + v)
    console.log(`sent for ${sendingS.toFixed(1)} s: ${ids.length} accepted (${(ids.length / sendingS).toFixed(1)}/s; offered ${((STATIONS * 1000) / PERIOD_MS).toFixed(0)}/s), ${errors.length} errors${errors.length ? ` (${[...new Set(errors)].join(', ')})` : ''}`)
    if (retried.size) console.log(`retried after: ${[...retried].map(([k, v]) => `${k} ×${v}`).join(', ')}`)

    // Drain: wait until every accepted recording is finished (bounded).
    const drainEnd = Date.now() + DRAIN_S * 1000
    let finished = 0
    while (Date.now() < drainEnd) {
      const [{ c }] = await db('recordings').whereIn('status', ['done', 'rejected', 'failed']).count<{ c: string }[]>({ c: '*' })
      finished = Number(c)
      if (finished >= ids.length) break
      await sleep(1000)
    }
    clearInterval(sampler)
    const results: { recording_id: string; created: Date }[] = await db('results').select('recording_id', 'created_at as created')
    const statuses: { status: string; n: string }[] = await db('recordings').groupBy('status').select('status').count({ n: '*' })
    const latencies = results.filter((r) => sentAt.has(Number(r.recording_id))).map((r) => r.created.getTime() - sentAt.get(Number(r.recording_id))!).sort((a, b) => a - b)
    const lost = ids.length - latencies.length
    const lastResultS = (Math.max(...results.map((r) => r.created.getTime())) - t0) / 1000
    const mem = memoryMb(stack.serverPid)
    const peakMb = peakOf(stack.serverPid)
    const workerPeaks = workerPids.map(peakOf)

    console.log(`recordings by status: ${statuses.map((s) => `${s.status} ${s.n}`).join(', ')}`)
    console.log(`analysed ${latencies.length} by ${WORKERS} worker(s); the last result ${lastResultS.toFixed(1)} s after the start (${(latencies.length / lastResultS).toFixed(1)} units/s)`)
    console.log(`upload→verdict ms: p50 ${percentile(latencies, 50)}, p95 ${percentile(latencies, 95)}, p99 ${percentile(latencies, 99)}, max ${latencies.at(-1)}`)
    for (const [kind, list] of Object.entries(pages)) {
      const s = list.sort((a, b) => a - b)
      console.log(`report ${kind}: ${s.length} reads, p50 ${percentile(s, 50).toFixed(0)} ms, p95 ${percentile(s, 95).toFixed(0)} ms`)
    }
    if (pageErrors.length) console.log(`report errors: ${pageErrors.length} (${[...new Set(pageErrors)].slice(0, 5).join(', ')})`)
    console.log(`server memory: peak ${peakMb.toFixed(0)} MB (VmHWM), now ${mem.rss.toFixed(0)} MB`)
    workerPids.forEach((p, i) => console.log(`worker ${i + 1} memory: peak ${workerPeaks[i]!.toFixed(0)} MB (VmHWM), now ${memoryMb(p).rss.toFixed(0)} MB`))
    console.log(`load accepted=${ids.length} errors=${errors.length + pageErrors.length} lost=${lost} p95_ms=${percentile(latencies, 95)} peak_rss_mb=${peakMb.toFixed(0)} worker_peak_rss_mb=${workerPeaks.map((w) => w.toFixed(0)).join(',')}`)
  } finally {
    await db.destroy()
    await stack.stop()
    rmSync(resolve(dataDir, 'recordings'), { recursive: true, force: true })
  }
}

main().catch((err: unknown) => {
  console.error(err)
  process.exit(1)
})
