/**
 * Demo station checks, so the stations and bench pages have something to show: one reference unit
 * per product (one of its golden units, measured three times on L1-EOL-A eight days ago), a check
 * plan on every station, a daily check over the last week on each, and one station, L2-EOL, whose
 * test box slowly leaks: its reference unit reads Fs a little higher every day until today's check
 * fails and the station is blocked. All through the real path (stored file, recording row,
 * processRecording). Runs after the demo factory; idempotent: does nothing once any reference unit
 * exists or without the demo products. Invented, like the rest of the demo.
 */
import { createHash, randomUUID } from 'node:crypto'
import { mkdir, rm, writeFile } from 'node:fs/promises'
import { join } from 'node:path'
import type { Knex } from 'knex'
import { insertRecording } from '../server/repos/recordings.ts'
import { processRecording } from '../server/services/analyze.ts'
import { registerReferenceUnit } from '../server/services/reference-units.ts'
import { setCheckPlan } from '../server/services/station-checks.ts'
import { latestShiftStart } from '../shared/utils/station-checks.ts'
import { directoryStorage, newStorageKey } from '../server/storage/recordings.ts'
import { loadConfig } from '../server/utils/config.ts'
import { demoEmail } from './01-demo-users.ts'
import { renderTest } from './demo/render.ts'
import { PRODUCTS, STATIONS, planScenario, type PlannedTest } from './demo/scenario.ts'

const DAY_MS = 86_400_000
const MIN_MS = 60_000
/** The station whose test box leaks, and how much higher it reads Fs each day (the last check fails). */
const LEAKING_STATION = 'L2-EOL'
const FS_DRIFT_PER_DAY = [0, 0.004, 0.008, 0.012, 0.016, 0.02, 0.06]
const TRUSTED_STATION = 'L1-EOL-A'
const SHIFT_STARTS = ['06:00', '14:00', '22:00']
const WHERE_KEPT = ['Line 1 check cabinet, shelf 1', 'Line 1 check cabinet, shelf 2', 'Line 3 check cabinet']

export async function seed(knex: Knex): Promise<void> {
  if (await knex('reference_units').first('id')) return
  const plan = planScenario()
  const products = new Map((await knex('products').whereIn('code', PRODUCTS.map((p) => p.code)).select('id', 'code')).map((p) => [p.code as string, Number(p.id)]))
  if (products.size !== PRODUCTS.length) return
  const stations = new Map(
    (await knex('stations as s').join('station_profiles as p', 'p.station_id', 's.id').whereIn('s.name', STATIONS.map((s) => s.name)).orderBy('p.version').select('s.id', 's.name', 'p.id as profile_id')).map((s) => [
      s.name as string,
      { id: Number(s.id), profileId: Number(s.profile_id) },
    ]),
  )
  const engineer = Number((await knex('users').where({ email: demoEmail('engineer') }).first('id'))?.id) || null
  const technician = Number((await knex('users').where({ email: demoEmail('technician') }).first('id'))?.id) || null
  const cfg = loadConfig()
  const storage = directoryStorage(cfg.dataDir)
  const tmpDir = join(cfg.dataDir, 'tmp', `seed-checks-${randomUUID()}`)
  await mkdir(tmpDir, { recursive: true })
  const now = Date.now()
  let seedNo = 90_000

  /** Stores and analyses one measurement of a reference unit as a station check. */
  async function measure(serial: string, unitId: number, base: PlannedTest, station: string, at: Date, fsFactor = 1): Promise<void> {
    // A leaking box reads the suspension as stiffer: Fs up by fsFactor, as a compliance 1/fsFactor² smaller would.
    const parts = { ...base.parts, cmsMPerN: base.parts.cmsMPerN / (fsFactor * fsFactor) }
    const t: PlannedTest = { ...base, station, parts, defect: 'none', seed: seedNo++, ambientC: 23, note: 'station check' }
    const { bytes, ext } = renderTest(t, STATIONS)
    const sha256 = createHash('sha256').update(bytes).digest('hex')
    const key = newStorageKey(sha256, 'sweep', at)
    const tmp = join(tmpDir, randomUUID())
    await writeFile(tmp, bytes)
    const s = stations.get(station)!
    const id = await insertRecording(knex, {
      unitId,
      stationId: s.id,
      stationProfileId: s.profileId,
      uploadedBy: technician,
      kind: 'sweep',
      originalName: `${serial}_${station}_check.${ext}`,
      byteSize: bytes.length,
      sha256,
      storageKey: key,
      ambientC: 23,
      note: 'station check',
      stationCheck: true,
      uploadedAt: at,
    })
    await storage.putFile(key, tmp)
    await processRecording(knex, storage, id)
  }

  try {
    const refs: { serial: string; unitId: number; base: PlannedTest }[] = []
    for (const [i, p] of PRODUCTS.entries()) {
      const golden = plan.units.find((u) => u.productCode === p.code && u.golden && u.fault === null)!
      const unitId = Number((await knex('units').where({ serial: golden.serial }).first('id')).id)
      const base = golden.tests.find((t) => t.kind === 'sweep')!
      const start = now - 8 * DAY_MS
      for (let k = 0; k < 3; k++) await measure(golden.serial, unitId, base, TRUSTED_STATION, new Date(start + k * 5 * MIN_MS))
      await registerReferenceUnit(
        knex,
        { serial: golden.serial, description: `${p.name}: golden unit kept as the reference, green tag`, keptAt: WHERE_KEPT[i % WHERE_KEPT.length]!, station: stations.get(TRUSTED_STATION)!.id, measurements: 3, limits: {} },
        engineer,
        { at: new Date(start + 20 * MIN_MS) },
      )
      refs.push({ serial: golden.serial, unitId, base })
    }
    // A daily check on every station over the last week, each with one product's reference unit,
    // today's a few minutes into the current shift (so the plan below finds the shift checked).
    const shiftStart = latestShiftStart(new Date(now), SHIFT_STARTS, 'UTC')!.getTime()
    const intoShift = Math.min(10 * MIN_MS, (now - shiftStart) / 2)
    for (const [i, s] of STATIONS.entries()) {
      const ref = refs[i % refs.length]!
      for (let k = 6; k >= 0; k--) {
        const drift = s.name === LEAKING_STATION ? 1 + FS_DRIFT_PER_DAY[6 - k]! : 1
        await measure(ref.serial, ref.unitId, ref.base, s.name, new Date(shiftStart + intoShift * ((i + 1) / STATIONS.length) - k * DAY_MS), drift)
      }
      // Each shift starts with a check, and every 400 units (an invented plan).
      await setCheckPlan(knex, stations.get(s.name)!.id, { shiftStarts: SHIFT_STARTS, timeZone: 'UTC', everyHours: null, everyUnits: 400 }, engineer)
    }
    console.log(`[seed] demo station checks: ${refs.length} reference units, ${STATIONS.length * 7} checks`)
  } finally {
    await rm(tmpDir, { recursive: true, force: true })
  }
}
