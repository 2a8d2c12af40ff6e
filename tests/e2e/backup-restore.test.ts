import { execFile } from 'node:child_process'
import { existsSync, mkdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs'
import { join, resolve } from 'node:path'
import knex, { type Knex } from 'knex'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { withDatabase } from '../../server/utils/config'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

// Seeds 1800–1809 (this file's range).
const host = await useTestServer()
const root = resolve(import.meta.dirname, '../..')
/** Backups of this file go here, not into the shared data folder. */
const backupDir = join(inject('dataDir'), `backup-test-${process.pid}`)
const restoredName = `conetrail_restored_${process.pid}`
let worker: RunningWorker
let restored: Knex | undefined

/** Runs a script against the test database; its data folder is the test server's unless told otherwise. */
function script(name: string, args: string[], dataDir = inject('dataDir')): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((ok) => {
    execFile(process.execPath, ['--import', 'tsx', resolve(root, 'scripts', name), ...args], {
      cwd: root,
      env: { ...process.env, DATABASE_URL: inject('databaseUrl'), CONETRAIL_DATA_DIR: dataDir },
    }, (err, stdout, stderr) => ok({ code: err ? Number((err as { code?: number }).code ?? 1) : 0, stdout, stderr }))
  })
}

/** Count and a checksum over every result's id, recording, unit, verdict and Fs. */
async function fingerprint(db: Knex) {
  const { rows } = await db.raw(`
    SELECT count(*)::int AS n,
           md5(coalesce(string_agg(id || ':' || recording_id || ':' || unit_id || ':' || coalesce(verdict, '-') || ':' || coalesce(fs_hz::text, '-'), ',' ORDER BY id), '')) AS sum
    FROM results`)
  const [{ recordings }] = await db('recordings').count({ recordings: '*' })
  return { ...rows[0], recordings: Number(recordings) }
}

beforeAll(async () => {
  rmSync(backupDir, { recursive: true, force: true })
  mkdirSync(backupDir, { recursive: true })
  worker = startWorker()
  await worker.ready
})

afterAll(async () => {
  await worker?.stop()
  await restored?.destroy()
  await testDb().raw(`DROP DATABASE IF EXISTS ${restoredName} WITH (FORCE)`).catch(() => {})
  rmSync(backupDir, { recursive: true, force: true })
  rmSync(join(inject('dataDir'), 'backups'), { recursive: true, force: true })
  await closeTestDb()
})

describe('npm run db:backup and db:restore', () => {
  it('restores a dump into a fresh database and finds every result', async () => {
    const tech = { cookie: (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie }
    const product = await makeProduct(unique('P'), 6)
    const station = await makeStation()
    const ids: number[] = []
    for (let i = 0; i < 3; i++) {
      const up = await postRecording(host, tech, { serial: unique('BK'), product: product.code, station: station.id }, { bytes: generateRecording({ seed: 1800 + i }), name: `bk${i}.wav` })
      expect(up.status).toBe(202)
      ids.push(up.body.id)
    }
    for (const id of ids) expect((await waitFinished(host, tech, id, 60_000)).status).toBe('done')
    await worker.stop()
    const source = await fingerprint(testDb())
    expect(source.n).toBeGreaterThanOrEqual(3)

    const b = await script('db-backup.ts', ['--with-recordings'])
    expect(b.code, b.stderr).toBe(0)
    const [dump, archive] = b.stdout.trim().split('\n')
    expect(dump).toMatch(new RegExp(`^${inject('dataDir')}/backups/conetrail-\\d{8}T\\d{6}Z\\.dump$`))
    expect(statSync(dump!).mode & 0o777).toBe(0o600)
    expect(archive).toBe(dump!.replace(/\.dump$/, '-recordings.tar'))

    const r = await script('db-restore.ts', [dump!, '--database', restoredName])
    expect(r.code, r.stderr).toBe(0)
    expect(r.stderr).toContain(`${source.n} results`)
    restored = knex({ client: 'pg', connection: withDatabase(inject('databaseUrl'), restoredName), pool: { min: 0, max: 2 } })
    expect(await fingerprint(restored)).toEqual(source)
    const rows = await restored('results').whereIn('recording_id', ids).select('recording_id', 'verdict')
    expect(rows.map((x: { recording_id: string }) => Number(x.recording_id)).sort()).toEqual([...ids].sort())
  }, 120_000)

  it('refuses to restore over a database that holds data unless told --yes', async () => {
    const dump = join(backupDir, 'again.dump')
    expect((await script('db-backup.ts', ['--out', dump])).code).toBe(0)
    const refused = await script('db-restore.ts', [dump, '--database', restoredName])
    expect(refused.code).toBe(3)
    expect(refused.stderr).toMatch(/not empty.*--yes/)
    const replaced = await script('db-restore.ts', [dump, '--database', restoredName, '--yes'])
    expect(replaced.code, replaced.stderr).toBe(0)
    await restored?.destroy()
    restored = knex({ client: 'pg', connection: withDatabase(inject('databaseUrl'), restoredName), pool: { min: 0, max: 2 } })
    expect(await fingerprint(restored)).toEqual(await fingerprint(testDb()))
  }, 60_000)

  it('archives the recording files with --with-recordings and unpacks them with --recordings', async () => {
    const keys: string[] = await testDb()('recordings').pluck('storage_key')
    // Every file a row points to (the worker-recovery test deletes one on purpose).
    const present = keys.filter((k) => existsSync(join(inject('dataDir'), 'recordings', k)))
    expect(present.length).toBeGreaterThanOrEqual(3)
    // A photo attached to a return lives beside the recordings and travels with them.
    const photo = join('test-backup', `${unique('photo')}.png`)
    mkdirSync(join(inject('dataDir'), 'attachments', 'test-backup'), { recursive: true })
    writeFileSync(join(inject('dataDir'), 'attachments', photo), 'stand-in bytes')
    const dump = join(backupDir, 'files.dump')
    const b = await script('db-backup.ts', ['--with-recordings', '--out', dump])
    expect(b.code, b.stderr).toBe(0)
    const archive = join(backupDir, 'files-recordings.tar')
    const listed = await new Promise<string>((ok, fail) => execFile('tar', ['-tf', archive], { maxBuffer: 64 << 20 }, (e, out) => (e ? fail(e) : ok(out))))
    const names = new Set(listed.split('\n').map((l) => l.replace(/^recordings\//, '')))
    expect(present.filter((k) => !names.has(k))).toEqual([])

    // Restored onto another machine's data folder: the database and the files come back together.
    const elsewhere = join(backupDir, 'elsewhere')
    const r = await script('db-restore.ts', [dump, '--database', restoredName, '--yes', '--recordings', archive], elsewhere)
    expect(r.code, r.stderr).toBe(0)
    expect(present.filter((k) => !existsSync(join(elsewhere, 'recordings', k)))).toEqual([])
    expect(readFileSync(join(elsewhere, 'attachments', photo), 'utf8')).toBe('stand-in bytes')
  }, 60_000)
})
