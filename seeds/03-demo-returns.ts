/**
 * Demo returns, so the returns desk has something to show: a few invented units back from the field, re-tested through the real path
 * (stored file, recording row linked to its return, processRecording), two of them closed. Runs
 * after the demo factory; idempotent: does nothing once any return exists or without the demo units.
 */
import { createHash, randomUUID } from 'node:crypto'
import { mkdir, rm, writeFile } from 'node:fs/promises'
import { join } from 'node:path'
import type { Knex } from 'knex'
import { recordAudit } from '../server/services/audit.ts'
import { insertRecording } from '../server/repos/recordings.ts'
import { closeReturnRow, insertReturn } from '../server/repos/returns.ts'
import { processRecording } from '../server/services/analyze.ts'
import { directoryStorage, newStorageKey } from '../server/storage/recordings.ts'
import { loadConfig } from '../server/utils/config.ts'
import { demoEmail } from './01-demo-users.ts'
import { renderTest } from './demo/render.ts'
import { planReturns } from './demo/returns.ts'
import { STATIONS, planScenario } from './demo/scenario.ts'

const DAY_MS = 86_400_000

export async function seed(knex: Knex): Promise<void> {
  if (await knex('returns').first('id')) return
  const plan = planScenario()
  const demo = planReturns(plan)
  const units = new Map((await knex('units').whereIn('serial', demo.map((r) => r.serial)).select('id', 'serial')).map((u) => [u.serial as string, Number(u.id)]))
  if (units.size !== demo.length) return
  const support = Number((await knex('users').where({ email: demoEmail('support') }).first('id'))?.id) || null
  const categories = new Map((await knex('return_categories').select('id', 'label')).map((c) => [c.label as string, Number(c.id)]))
  const cfg = loadConfig()
  const storage = directoryStorage(cfg.dataDir)
  const tmpDir = join(cfg.dataDir, 'tmp', `seed-returns-${randomUUID()}`)
  await mkdir(tmpDir, { recursive: true })
  try {
    for (const [i, r] of demo.entries()) {
      const unit = plan.units.find((u) => u.serial === r.serial)!
      const received = new Date(Date.now() - r.receivedDaysAgo * DAY_MS)
      const returnId = await insertReturn(knex, {
        unitId: units.get(r.serial)!,
        receivedOn: received.toISOString().slice(0, 10),
        customerRef: r.customerRef,
        categoryId: categories.get(r.category)!,
        complaint: r.complaint,
        createdBy: support,
      })
      if (r.retest) {
        const factoryTest = unit.tests[0]!
        const t = { ...factoryTest, parts: r.retest.parts, defect: r.retest.defect, seed: r.retest.seed, ambientC: r.retest.ambientC, note: 'return test' }
        const { bytes, ext } = renderTest(t, STATIONS)
        const sha256 = createHash('sha256').update(bytes).digest('hex')
        const key = newStorageKey(sha256, 'sweep')
        const tmp = join(tmpDir, randomUUID())
        await writeFile(tmp, bytes)
        const station = await knex('stations as s')
          .join('station_profiles as p', 'p.station_id', 's.id')
          .where('s.name', factoryTest.station!)
          .orderBy('p.version', 'desc')
          .first('s.id', 'p.id as profile_id')
        const recordingId = await insertRecording(knex, {
          unitId: units.get(r.serial)!,
          stationId: Number(station.id),
          stationProfileId: Number(station.profile_id),
          uploadedBy: support,
          kind: 'sweep',
          originalName: `${r.serial}_return.${ext}`,
          byteSize: bytes.length,
          sha256,
          storageKey: key,
          ambientC: r.retest.ambientC,
          note: 'return test',
          returnId,
        })
        await storage.putFile(key, tmp)
        await processRecording(knex, storage, recordingId)
        // Re-tested an hour or two after it arrived (today's return: a few minutes ago).
        const at = new Date(Math.min(Date.now() - (i + 1) * 60_000, received.getTime() + (1 + i) * 3_600_000))
        await knex('recordings').where({ id: recordingId }).update({ uploaded_at: at, finished_at: new Date(at.getTime() + 2000) })
      }
      if (r.close) {
        await closeReturnRow(knex, returnId, { disposition: r.close.disposition, cause: r.close.cause ?? null, causeClass: r.close.causeClass ?? null, note: r.close.note ?? null, closedBy: support })
        await recordAudit(knex, { userId: support, action: 'return.close', entity: 'return', entityId: returnId, comment: r.close.note ?? null, detail: { serial: r.serial, disposition: r.close.disposition } })
      }
    }
    console.log(`[seed] demo returns: ${demo.length}`)
  } finally {
    await rm(tmpDir, { recursive: true, force: true })
  }
}
