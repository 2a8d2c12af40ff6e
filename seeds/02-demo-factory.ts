/**
 * Demo scenario, so every page has realistic data on first start: an invented factory with three driver models, four stations,
 * lots, about 240 units with recordings from the seeded generator (some failing for the reasons a
 * line sees), retests, lab impedance tables, and a first mask per product built from golden units
 * with proposeLimits. Recordings go through the real path: stored file, recording row, then
 * processRecording (no queue). Idempotent: does nothing once any product exists.
 */
import { createHash, randomUUID } from 'node:crypto'
import { mkdir, rm, writeFile } from 'node:fs/promises'
import { join } from 'node:path'
import type { Knex } from 'knex'
import type { StationProfile } from '../server/analysis/index.ts'
import { createProduct } from '../server/repos/products.ts'
import { insertRecording } from '../server/repos/recordings.ts'
import { createStation } from '../server/services/stations.ts'
import { findOrCreateLot } from '../server/repos/units.ts'
import { processRecording } from '../server/services/analyze.ts'
import { createMaskFromGolden, releaseAndJudge } from '../server/services/masks.ts'
import { directoryStorage, newStorageKey, type RecordingStorage } from '../server/storage/recordings.ts'
import { loadConfig } from '../server/utils/config.ts'
import { demoEmail } from './01-demo-users.ts'
import { createRenderPool, type Rendered } from './demo/render-pool.ts'
import { PRODUCTS, STATIONS, planScenario, type PlannedTest, type PlannedUnit } from './demo/scenario.ts'

/** The scenario ends this long before the seed runs, so the newest results look recent. */
const END_BEFORE_NOW_MIN = 10
/** A station's upload is analysed within a couple of seconds (shown as finished_at). */
const ANALYSIS_SECONDS = 2
/** Recordings stored and analysed at once, so file and database syncs overlap with rendering and analysis. */
const IN_FLIGHT = 4

interface Ctx {
  db: Knex
  storage: RecordingStorage
  tmpDir: string
  startMs: number
  stationIds: Map<string, { id: number; profileId: number; profile: StationProfile }>
  unitIds: Map<string, number>
  users: { technician: number | null; engineer: number | null }
}

const at = (ctx: Ctx, minutes: number) => new Date(ctx.startMs + minutes * 60_000)

function stamp(d: Date): string {
  return d.toISOString().replace(/[-:]/g, '').slice(0, 15)
}

/** Stores one planned test as a recording and analyses it (judged when its product has a released mask). */
async function record(ctx: Ctx, unit: PlannedUnit, t: PlannedTest, rendered: Rendered): Promise<void> {
  const { bytes, ext } = rendered
  const kind = t.kind
  const uploadedAt = at(ctx, t.atMin)
  const sha256 = createHash('sha256').update(bytes).digest('hex')
  const key = newStorageKey(sha256, kind, uploadedAt)
  const tmp = join(ctx.tmpDir, randomUUID())
  await writeFile(tmp, bytes)
  const station = t.station ? ctx.stationIds.get(t.station)! : null
  const id = await insertRecording(ctx.db, {
    unitId: ctx.unitIds.get(unit.serial)!,
    stationId: station?.id ?? null,
    stationProfileId: station?.profileId ?? null,
    uploadedBy: t.by === 'station' ? null : ctx.users[t.by],
    kind,
    originalName: kind === 'sweep' ? `${unit.serial}_${t.station}_${stamp(uploadedAt)}.${ext}` : `${unit.serial}-impedance.${ext}`,
    byteSize: bytes.length,
    sha256,
    storageKey: key,
    ambientC: t.ambientC,
    note: t.note,
  })
  await ctx.storage.putFile(key, tmp)
  await processRecording(ctx.db, ctx.storage, id)
  await ctx.db('recordings')
    .where({ id })
    .update({ uploaded_at: uploadedAt, finished_at: new Date(uploadedAt.getTime() + ANALYSIS_SECONDS * 1000) })
}

async function userId(db: Knex, role: string): Promise<number | null> {
  const u = await db('users').where({ email: demoEmail(role) }).first('id')
  return u ? Number(u.id) : null
}

export async function seed(knex: Knex): Promise<void> {
  if (await knex('products').first('id')) return
  const t0 = performance.now()
  const cfg = loadConfig()
  const plan = planScenario()
  const tmpDir = join(cfg.dataDir, 'tmp', `seed-${randomUUID()}`)
  await mkdir(tmpDir, { recursive: true })
  const pool = createRenderPool()
  const ctx: Ctx = {
    db: knex,
    storage: directoryStorage(cfg.dataDir),
    tmpDir,
    startMs: Date.now() - (END_BEFORE_NOW_MIN + plan.spanMin) * 60_000,
    stationIds: new Map(),
    unitIds: new Map(),
    users: { technician: await userId(knex, 'technician'), engineer: await userId(knex, 'engineer') },
  }
  try {
    // Products, stations, lots and units.
    const productIds = new Map<string, number>()
    for (const p of PRODUCTS) {
      productIds.set(p.code, await createProduct(knex, { code: p.code, name: p.name, ratedImpedanceOhm: p.ratedImpedanceOhm, nominalSize: p.nominalSize, sensitivityBandHz: p.sensitivityBandHz, coil: p.coil }))
    }
    for (const s of STATIONS) {
      const { id } = await createStation(knex, { name: s.name, line: s.line, profile: s.profile, createdBy: ctx.users.engineer })
      const profileId = Number((await knex('station_profiles').where({ station_id: id, version: 1 }).first('id')).id)
      ctx.stationIds.set(s.name, { id, profileId, profile: s.profile })
    }
    const firstTest = (u: PlannedUnit) => Math.min(...u.tests.map((t) => t.atMin))
    const lotIds = new Map<string, number>()
    for (const u of plan.units) {
      const productId = productIds.get(u.productCode)!
      if (!lotIds.has(u.lotCode)) {
        const lotId = await findOrCreateLot(knex, productId, u.lotCode)
        const lotStart = Math.min(...plan.units.filter((v) => v.lotCode === u.lotCode).map(firstTest))
        await knex('lots').where({ id: lotId }).update({ created_at: at(ctx, lotStart - 60) })
        lotIds.set(u.lotCode, lotId)
      }
    }
    const unitRows = await knex('units')
      .insert(plan.units.map((u) => ({ serial: u.serial, product_id: productIds.get(u.productCode), lot_id: lotIds.get(u.lotCode), created_at: at(ctx, firstTest(u)) })))
      .returning(['id', 'serial'])
    for (const r of unitRows) ctx.unitIds.set(r.serial, Number(r.id))

    const tests = plan.units.flatMap((u) => u.tests.map((t) => ({ u, t })))
    // 1. Tested before any mask existed, golden units included: stored and analysed, not judged.
    const early = tests.filter(({ t }) => t.phase === 'before_mask' || t.phase === 'golden')
    for (const { u, t } of early) await record(ctx, u, t, await pool.render(t))

    // 2. The first mask of each product, proposed from its golden units exactly as an engineer
    //    does it (POST /api/masks), then released: releasing judges the never-judged results.
    for (const p of PRODUCTS) {
      const goldenSerials = [...new Set(tests.filter(({ u, t }) => t.phase === 'golden' && u.productCode === p.code).map(({ u }) => u.serial))]
      // No impedance-curve band: per-frequency limits from a dozen units are too tight on the slopes
      // of the resonance peak (a unit with Fs 1 Hz off the golden mean leaves it); Fs, Qts and Re judge the impedance.
      const maskId = await createMaskFromGolden(knex, { product: p.code, goldenSerials, name: `First release, from ${goldenSerials.length} golden units` }, ctx.users.engineer)
      await knex('masks').where({ id: maskId }).update({ created_at: at(ctx, plan.maskReleaseAtMin - 15) })
      await releaseAndJudge(knex, maskId, ctx.users.engineer, 'First mask of the product, from the first lot\'s golden units', { at: at(ctx, plan.maskReleaseAtMin) })
    }

    // 3. Everything else, in time order, judged by mask v1. A few recordings in flight at once so the
    //    file and database syncs overlap with the analysis; a unit's tests stay in order.
    const rest = tests.filter(({ t }) => t.phase !== 'before_mask' && t.phase !== 'golden').sort((a, b) => a.t.atMin - b.t.atMin)
    const lastOfUnit = new Map<string, Promise<void>>()
    const inFlight = new Set<Promise<void>>()
    for (const { u, t } of rest) {
      while (inFlight.size >= IN_FLIGHT) await Promise.race(inFlight)
      const rendered = pool.render(t)
      const task = (lastOfUnit.get(u.serial) ?? Promise.resolve()).then(async () => record(ctx, u, t, await rendered))
      lastOfUnit.set(u.serial, task)
      inFlight.add(task)
      void task.finally(() => inFlight.delete(task)).catch(() => {})
    }
    await Promise.all([...lastOfUnit.values()])

    console.log(`[seed] demo factory: ${plan.units.length} units, ${tests.length} recordings in ${((performance.now() - t0) / 1000).toFixed(1)} s`)
  } finally {
    await pool.close()
    await rm(tmpDir, { recursive: true, force: true })
  }
}
