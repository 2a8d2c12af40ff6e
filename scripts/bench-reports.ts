/**
 * npm run bench:reports — the quality pages at factory scale, on a disposable stack
 * (`<data dir>/bench-reports`, PostgreSQL on PGPORT + 3).
 *
 * Fills about 1 000 000 production results over 500 lots with set-based SQL (INSERT … SELECT over
 * generate_series; no files: the reports read only rows), then times, as medians of several runs:
 * a lot report (getLotReport, in process), the dashboard (getDashboard, in process) and a serial
 * lookup (GET /api/units/:serial over HTTP with a session cookie) and the search box's answer
 * (GET /api/units?q= for prefixes and for mistyped serials, which ask for the nearest serials).
 * Ends with
 *   reports lot_ms=<x> dashboard_ms=<y> lookup_ms=<z> search_ms=<s>
 * Targets: lot ≤ 300 ms, dashboard ≤ 500 ms, lookup ≤ 20 ms, search ≤ 50 ms (our targets).
 * Options: BENCH_BUILD=0 reuses the last build; BENCH_UNITS_PER_LOT (default 1960).
 */
import { resolve } from 'node:path'
import knex, { type Knex } from 'knex'
import { DEFAULT_PROFILE } from '../server/analysis/index'
import { createProduct } from '../server/repos/products'
import { createStation } from '../server/repos/stations'
import { createMaskDraft, releaseMask } from '../server/repos/masks'
import { getLotReport } from '../server/services/lot-report'
import { getDashboard } from '../server/services/dashboard'
import { DEFAULTS, loadConfig } from '../server/utils/config'
import { DEMO_PASSWORD, demoEmail } from '../seeds/01-demo-users'
import { startStack } from './stack'

const LOTS = 500
const PRODUCTS = 5
const STATIONS = 8
/** 1960 units a lot, plus retests of about two thirds of the ~3 % that fail first: about 1 000 000 results. */
const UNITS_PER_LOT = Number(process.env.BENCH_UNITS_PER_LOT) || 1960
/** A lot every 4 hours (six a day), a unit every 7 s within it. */
const LOT_SPACING_H = 4
const UNIT_SPACING_S = 7
const OPEN_LOTS = 12
const RUNS = 9
const LOOKUPS = 41

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b)
  return s.length % 2 ? s[(s.length - 1) / 2]! : (s[s.length / 2 - 1]! + s[s.length / 2]!) / 2
}

async function timed<T>(fn: () => Promise<T>): Promise<number> {
  const t0 = performance.now()
  await fn()
  return performance.now() - t0
}

async function step(label: string, fn: () => Promise<unknown>) {
  const t0 = Date.now()
  await fn()
  console.log(`fill: ${label} in ${((Date.now() - t0) / 1000).toFixed(1)} s`)
}

/** Results rows for the recordings picked by `where`, with plausible figures and a few % failing (fail class in `fail`). */
function resultsInsert(where: string): string {
  return `
    INSERT INTO results (recording_id, unit_id, kind, mask_id, verdict, checks, judged_at, re_ohm, re20_ohm, ambient_c, fs_hz, qms, qes, qts,
                         le_mh, zmax_ohm, zmin_ohm, sensitivity_db, thd_pct, thd_max_pct, rub_buzz_db, fit_error_pct, polarity, flags,
                         parameters, curve_freq_hz, engine_version, timings_ms, created_at)
    SELECT v.id, v.unit_id, 'sweep', v.mask_id, CASE WHEN v.fail IS NULL THEN 'pass' ELSE 'fail' END,
           jsonb_build_object('unmeasured', '[]'::jsonb, 'checks', jsonb_build_array(
             jsonb_build_object('name', 'coil', 'value', v.re, 'low', null, 'high', null, 'unit', 'Ω', 'pass', true),
             jsonb_build_object('name', 'polarity', 'value', CASE WHEN v.fail = 'polarity' THEN -1 ELSE 1 END, 'low', 1, 'high', null, 'unit', '', 'pass', v.fail IS DISTINCT FROM 'polarity'),
             jsonb_build_object('name', 're20Ohm', 'value', v.re20, 'low', 5.2, 'high', 6.6, 'unit', 'Ω', 'pass', true),
             jsonb_build_object('name', 'fsHz', 'value', v.fs, 'low', 35, 'high', 55, 'unit', 'Hz', 'pass', v.fail IS DISTINCT FROM 'fsHz'),
             jsonb_build_object('name', 'rubBuzzDb', 'value', v.rb, 'low', null, 'high', -50, 'unit', 'dB', 'pass', v.fail IS DISTINCT FROM 'rubBuzzDb'))),
           v.at, v.re, v.re20, 23, v.fs, v.qms, v.qes, v.qts, 0.42, 38, 6.4, v.sens, 0.8, v.thd, v.rb, 1.5,
           CASE WHEN v.fail = 'polarity' THEN 'inverted' ELSE 'normal' END,
           jsonb_build_object('polarity', CASE WHEN v.fail = 'polarity' THEN 'inverted' ELSE 'normal' END, 'openCoil', false, 'shortedCoil', false,
                              'clippedChannels', '[]'::jsonb, 'lowSnrChannels', '[]'::jsonb, 'rubBuzz', v.fail = 'rubBuzzDb'),
           jsonb_build_object('reOhm', v.re, 're20Ohm', v.re20, 'ambientC', 23, 'fsHz', v.fs, 'qms', v.qms, 'qes', v.qes, 'qts', v.qts, 'leMh', 0.42,
                              'zmaxOhm', 38, 'zminOhm', 6.4, 'fZminHz', 260, 'fitErrorPct', 1.5, 'sensitivityDb', v.sens, 'sensitivityBandHz', '[300, 3000]'::jsonb,
                              'thdPct', 0.8, 'thdMaxPct', v.thd, 'thdMaxAtHz', 120, 'rubBuzzDb', v.rb, 'rubBuzzAtHz', 400, 'rubBuzzLimitDb', -50, 'acousticDelayMs', 0.3),
           '{}'::real[], 'bench', '{}'::jsonb, v.at
      FROM (
        SELECT r.id, r.unit_id, r.uploaded_at AS at, p.active_mask_id AS mask_id, n.fail,
               round((5.9 + 0.12 * n.z1)::numeric, 4)::float8 AS re, round((5.85 + 0.12 * n.z1)::numeric, 4)::float8 AS re20,
               CASE WHEN n.fail = 'fsHz' THEN 56 + 4 * n.u ELSE round((45 + 2.5 * n.z2)::numeric, 3)::float8 END AS fs,
               4.1 + 0.2 * n.z3 AS qms, 0.52 + 0.03 * n.z2 AS qes, 0.46 + 0.025 * n.z2 AS qts,
               87 + 0.6 * n.z3 AS sens, 1.1 + 0.3 * n.u AS thd,
               CASE WHEN n.fail = 'rubBuzzDb' THEN -44 - 4 * n.u ELSE -62 + 3 * n.z1 END AS rb
          FROM recordings r
          JOIN units u ON u.id = r.unit_id
          JOIN products p ON p.id = u.product_id
          CROSS JOIN LATERAL (
            SELECT x.*, CASE WHEN r.original_name = 'retest.wav' THEN NULL
                             WHEN x.pick < 0.012 THEN 'polarity' WHEN x.pick < 0.024 THEN 'fsHz' WHEN x.pick < 0.032 THEN 'rubBuzzDb' END AS fail
              FROM (SELECT random() AS pick, random() AS u,
                           (random() + random() + random() + random() - 2) * 1.732 AS z1,
                           (random() + random() + random() + random() - 2) * 1.732 AS z2,
                           (random() + random() + random() + random() - 2) * 1.732 AS z3,
                           r.id AS _r) x
          ) n
         WHERE ${where}
      ) v`
}

async function fill(db: Knex) {
  const productIds: number[] = []
  for (let i = 1; i <= PRODUCTS; i++) {
    const id = await createProduct(db, { code: `BR-${i}`, name: `Benchmark driver ${i}`, ratedImpedanceOhm: 6 })
    const mask = await createMaskDraft(db, {
      productId: id,
      name: 'bench',
      limits: { scalars: { fsHz: { low: 35, high: 55 }, re20Ohm: { low: 5.2, high: 6.6 }, rubBuzzDb: { low: null, high: -50 } }, polarityNormal: true, ratedImpedanceRule: true, curves: {} },
      createdBy: null,
    })
    await releaseMask(db, mask, { by: null, comment: 'benchmark' })
    productIds.push(id)
  }
  for (let i = 1; i <= STATIONS; i++) {
    await createStation(db, { name: `Bench station ${i}`, line: `Line ${Math.ceil(i / 2)}`, profile: DEFAULT_PROFILE, createdBy: null })
  }
  await step(`${LOTS} lots`, () =>
    db.raw(
      `INSERT INTO lots (product_id, code, created_at, closed_at)
       SELECT (SELECT id FROM products WHERE code = 'BR-' || (1 + k % ${PRODUCTS})), 'BL-' || lpad(k::text, 4, '0'), t, CASE WHEN k > ${LOTS - OPEN_LOTS} THEN NULL ELSE t + interval '5 hours' END
         FROM generate_series(1, ${LOTS}) k, LATERAL (SELECT now() - (${LOTS} - k + 1) * interval '${LOT_SPACING_H} hours' AS t) s`,
    ),
  )
  await step(`${LOTS * UNITS_PER_LOT} units`, () =>
    db.raw(
      `INSERT INTO units (serial, product_id, lot_id, created_at)
       SELECT l.code || '-' || lpad(i::text, 5, '0'), l.product_id, l.id, l.created_at + i * interval '${UNIT_SPACING_S} seconds'
         FROM lots l, generate_series(1, ${UNITS_PER_LOT}) i WHERE l.code LIKE 'BL-%' ORDER BY l.id, i`,
    ),
  )
  const stations = `(SELECT array_agg(id ORDER BY id) FROM stations)`
  await step('first-test recordings', () =>
    db.raw(
      `INSERT INTO recordings (unit_id, station_id, uploaded_at, kind, original_name, byte_size, sha256, storage_key, status, finished_at, ambient_c)
       SELECT u.id, (${stations})[1 + u.id % ${STATIONS}], u.created_at, 'sweep', 'first.wav', 1000000, md5(u.id::text), 'bench/' || u.id, 'done', u.created_at, 23
         FROM units u WHERE u.serial LIKE 'BL-%' ORDER BY u.id`,
    ),
  )
  await step('first-test results', () => db.raw(resultsInsert(`r.original_name = 'first.wav'`)))
  await step('retests of two thirds of the failed units', () =>
    db.raw(
      `INSERT INTO recordings (unit_id, station_id, uploaded_at, kind, original_name, byte_size, sha256, storage_key, status, finished_at, ambient_c)
       SELECT r.unit_id, r.station_id, r.uploaded_at + interval '15 minutes', 'sweep', 'retest.wav', 1000000, md5(r.unit_id::text || 'retest'), 'bench/r' || r.unit_id, 'done', r.uploaded_at + interval '15 minutes', 23
         FROM results res JOIN recordings r ON r.id = res.recording_id
        WHERE res.verdict = 'fail' AND res.unit_id % 3 <> 0 ORDER BY r.unit_id`,
    ),
  )
  await step('retest results', () => db.raw(resultsInsert(`r.original_name = 'retest.wav'`)))
  await step('analyze', () => db.raw('ANALYZE'))
  const [{ n }] = (await db('results').count({ n: '*' })) as { n: string }[]
  console.log(`fill: ${Number(n)} results, ${productIds.length} products, ${LOTS} lots (${OPEN_LOTS} open)`)
}

async function main() {
  const stack = await startStack({
    dataDir: resolve(loadConfig().dataDir, 'bench-reports'),
    pgPort: (Number(process.env.PGPORT) || DEFAULTS.pgPort) + 3,
    database: 'conetrail_bench_reports',
    build: process.env.BENCH_BUILD !== '0',
  })
  const db = knex({ client: 'pg', connection: stack.databaseUrl, pool: { min: 0, max: 6 } })
  let summary = ''
  try {
    await fill(db)
    // Lot reports of different lots, closed and open, one warm-up first.
    const lotCodes = Array.from({ length: RUNS + 1 }, (_, i) => `BL-${String(Math.round(((i + 1) * LOTS) / (RUNS + 2))).padStart(4, '0')}`)
    const lotMs: number[] = []
    for (const [i, code] of lotCodes.entries()) {
      let units = 0
      const ms = await timed(async () => {
        units = (await getLotReport(db, code))!.summary.unitsTested
      })
      if (i > 0) lotMs.push(ms)
      if (i === 1) console.log(`lot ${code}: ${units} units in ${ms.toFixed(0)} ms`)
    }
    const today = new Date().toISOString().slice(0, 10)
    const dashMs: number[] = []
    for (let i = 0; i <= RUNS; i++) {
      const ms = await timed(() => getDashboard(db, today))
      if (i > 0) dashMs.push(ms)
    }
    const dash = await getDashboard(db, today)
    console.log(`dashboard ${today}: ${dash.byLineProduct.reduce((s, r) => s + r.unitsTested, 0)} units today, ${dash.openLots.length} open lots`)

    const login = await fetch(new URL('/api/auth/login', stack.baseUrl), {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: demoEmail('support'), password: DEMO_PASSWORD }),
    })
    if (!login.ok) throw new Error(`sign-in failed: ${login.status}`)
    const cookie = login.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ')
    const retested = await db('recordings').where('original_name', 'retest.wav').join('units', 'units.id', 'recordings.unit_id').limit(10).pluck('units.serial')
    const lookupMs: number[] = []
    for (let i = 0; i <= LOOKUPS; i++) {
      // Mostly ordinary units spread over the lots, some retested ones (two results each).
      const serial = i % 4 === 0 && retested.length ? retested[i % retested.length]! : `BL-${String(1 + ((i * 37) % LOTS)).padStart(4, '0')}-${String(1 + ((i * 131) % UNITS_PER_LOT)).padStart(5, '0')}`
      const ms = await timed(async () => {
        const res = await fetch(new URL(`/api/units/${serial}`, stack.baseUrl), { headers: { cookie } })
        if (res.status !== 200) throw new Error(`lookup ${serial}: ${res.status}`)
        await res.arrayBuffer()
      })
      if (i > 0) lookupMs.push(ms)
    }
    const searchMs: number[] = []
    for (let i = 0; i <= LOOKUPS; i++) {
      const lot = String(1 + ((i * 53) % LOTS)).padStart(4, '0')
      const unit = String(1 + ((i * 97) % UNITS_PER_LOT)).padStart(5, '0')
      // Even: a prefix (a lot's first units); odd: a serial with two digits swapped (nearest serials).
      const q = i % 2 === 0 ? `BL-${lot}-00` : `BL-${lot}-${unit.slice(0, 3)}${unit[4]}${unit[3]}`
      const ms = await timed(async () => {
        const res = await fetch(new URL(`/api/units?q=${encodeURIComponent(q)}`, stack.baseUrl), { headers: { cookie } })
        if (res.status !== 200) throw new Error(`search ${q}: ${res.status}`)
        await res.arrayBuffer()
      })
      if (i > 0) searchMs.push(ms)
    }
    summary = (`reports lot_ms=${median(lotMs).toFixed(0)} dashboard_ms=${median(dashMs).toFixed(0)} lookup_ms=${median(lookupMs).toFixed(1)} search_ms=${median(searchMs).toFixed(1)}`)
  } finally {
    await db.destroy()
    await stack.stop()
  }
  // Last, after the stack's own messages.
  console.log(summary)
}

main().catch((err: unknown) => {
  console.error(err)
  process.exit(1)
})
