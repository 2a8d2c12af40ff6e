import { createHash } from 'node:crypto'
import { existsSync, mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { ANALYZE_QUEUE } from '../../server/queue/index'
import { StorageUnavailable, asStorageFault } from '../../server/storage/recordings'
import { generateRecording } from '../../fixtures/generator'
import { useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { startExtraServer, type ExtraServer } from '../support/server'
import { postRecording } from '../support/upload'

// Seeds 1700–1709 (this file's range).
const host = await useTestServer()
/** A data directory whose recording store is a regular file: every write into it fails, even for root. */
const brokenDir = join(inject('dataDir'), `broken-storage-${process.pid}`)
let broken: ExtraServer

beforeAll(async () => {
  rmSync(brokenDir, { recursive: true, force: true })
  mkdirSync(brokenDir, { recursive: true })
  writeFileSync(join(brokenDir, 'recordings'), 'not a folder\n')
  broken = await startExtraServer({ dataDir: brokenDir })
})

afterAll(async () => {
  await broken?.stop()
  rmSync(brokenDir, { recursive: true, force: true })
  await closeTestDb()
})

async function queuedJobs(): Promise<number> {
  // The queue's tables appear with the first pg-boss start (the server's first upload).
  const { rows } = await testDb().raw("SELECT to_regclass('pgboss.job') IS NOT NULL AS present")
  if (!rows[0].present) return 0
  const [{ n }] = await testDb()('pgboss.job').where({ name: ANALYZE_QUEUE }).count({ n: '*' })
  return Number(n)
}

describe('the recording store cannot take files', () => {
  it('answers 507 storage_unavailable and leaves no unit, recording, job or temporary file behind', async () => {
    const product = await makeProduct(unique('P'), 6)
    const station = await makeStation()
    const bytes = generateRecording({ seed: 1700 })
    const sha256 = createHash('sha256').update(bytes).digest('hex')
    const serial = unique('FULL')
    const jobsBefore = await queuedJobs()

    const res = await postRecording(broken.baseUrl, { token: station.token }, { serial, product: product.code }, { bytes, name: 'full.wav' })
    expect(res.status).toBe(507)
    expect(res.body.data?.code).toBe('storage_unavailable')
    expect((res.body.data as { errno?: string }).errno).toBe('ENOTDIR')

    expect(await testDb()('recordings').where({ sha256 }).first()).toBeUndefined()
    expect(await testDb()('units').where({ serial }).first()).toBeUndefined()
    expect(await queuedJobs()).toBe(jobsBefore)
    expect(readdirSync(join(brokenDir, 'tmp', 'uploads'))).toEqual([])

    // Nothing half-registered blocks the station's next try, on a server whose store works.
    const again = await postRecording(host, { token: station.token }, { serial, product: product.code }, { bytes, name: 'full.wav' })
    expect(again.status).toBe(202)
    const row = await testDb()('recordings').where({ id: again.body.id }).first()
    expect(row.sha256).toBe(sha256)
    expect(existsSync(join(inject('dataDir'), 'recordings', row.storage_key))).toBe(true)
  })

  it('keeps a unit that existed before the refused upload, with no recording added', async () => {
    const product = await makeProduct(unique('P'), 6)
    const station = await makeStation()
    const serial = unique('KEEP')
    const first = await postRecording(host, { token: station.token }, { serial, product: product.code }, { bytes: generateRecording({ seed: 1701 }), name: 'a.wav' })
    expect(first.status).toBe(202)
    const unit = await testDb()('units').where({ serial }).first()

    const res = await postRecording(broken.baseUrl, { token: station.token }, { serial, product: product.code }, { bytes: generateRecording({ seed: 1702 }), name: 'b.wav' })
    expect(res.status).toBe(507)
    expect(await testDb()('units').where({ serial }).first()).toEqual(unit)
    expect(await testDb()('recordings').where({ unit_id: unit.id }).pluck('id')).toEqual([String(first.body.id)])
  })

  it.each(['ENOSPC', 'EDQUOT', 'EROFS', 'EACCES', 'EPERM', 'ENOTDIR'])('treats %s from the file system as the store being unavailable', (code) => {
    const fault = asStorageFault(Object.assign(new Error(`${code}: simulated`), { code }))
    expect(fault).toBeInstanceOf(StorageUnavailable)
    expect((fault as StorageUnavailable).errno).toBe(code)
  })

  it('leaves other errors as they are (a missing temporary file is a bug, not a full disk)', () => {
    const err = Object.assign(new Error('ENOENT: no such file'), { code: 'ENOENT' })
    expect(asStorageFault(err)).toBe(err)
  })
})
