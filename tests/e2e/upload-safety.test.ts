import { existsSync, readdirSync, readFileSync } from 'node:fs'
import { isAbsolute, join, relative, resolve } from 'node:path'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording } from '../support/upload'

// Seeds 1750–1799 (this file's range). No worker: these checks are about what the upload stores.
const host = await useTestServer()
const projectRoot = resolve(import.meta.dirname, '../..')
const storageRoot = join(inject('dataDir'), 'recordings')
/** Our storage keys: year/month folders, a random id and the start of the content hash (server/storage/recordings.ts). */
const KEY_RE = /^\d{4}\/\d{2}\/[0-9a-f-]{36}-[0-9a-f]{12}\.(wav|txt)$/
let station: { id: number; token: string }
let product: { code: string }

beforeAll(async () => {
  product = await makeProduct(unique('P'), 6)
  station = await makeStation()
})

afterAll(() => closeTestDb())

/** A valid impedance table (frequency, magnitude) of 40 points. */
function impedanceTable(): string {
  return Array.from({ length: 40 }, (_, i) => {
    const f = 10 * 1.15 ** i
    return `${f.toFixed(3)},${(6 + 30 / (1 + ((f - 60) / 12) ** 2)).toFixed(3)}`
  }).join('\n')
}

const upload = (bytes: Uint8Array | string, name: string) => postRecording(host, { token: station.token }, { serial: unique('SAFE'), product: product.code }, { bytes, name })

describe('upload hardening', () => {
  it('refuses a body over the size limit with 413 and stores nothing', async () => {
    const before = await testDb()('recordings').count({ n: '*' })
    // The test server runs with CONETRAIL_MAX_UPLOAD_MB=8 (tests/global-setup.ts).
    const res = await upload(new Uint8Array(9 * 1024 * 1024), 'big.wav')
    expect(res.status).toBe(413)
    expect(res.body.data?.code).toBe('too_large')
    expect(await testDb()('recordings').count({ n: '*' })).toEqual(before)
  })

  it.each([
    ['text named .wav that is no impedance table', 'hello, this is not audio\nreally not', 'sweep.wav', 422, 'table_unparsable'],
    ['binary named .wav that is no RIFF file', Buffer.from([0x00, 0xff, 0x10, 0x00, 0x42, 0x00, 0x00, 0x13]), 'sweep.wav', 415, 'unsupported_file'],
    ['RIFF header with a broken body named .wav', Buffer.concat([Buffer.from('RIFF\x24\x00\x00\x00WAVEfmt '), Buffer.alloc(8)]), 'sweep.wav', 422, 'truncated'],
  ] as const)('judges the content, not the name: %s is refused', async (_label, bytes, name, status, code) => {
    const res = await upload(typeof bytes === 'string' ? bytes : new Uint8Array(bytes), name)
    expect(res.status).toBe(status)
    expect(res.body.data?.code).toBe(code)
  })

  it('takes a WAVE recording named .txt as a sweep, and a table named .wav as a table', async () => {
    const sweep = await upload(generateRecording({ seed: 1750 }), 'notes.txt')
    expect(sweep.status).toBe(202)
    const table = await upload(impedanceTable(), 'recording.wav')
    expect(table.status).toBe(202)
    const rows = await testDb()('recordings').whereIn('id', [sweep.body.id, table.body.id]).orderBy('id').select('id', 'kind', 'storage_key')
    expect(rows.map((r: { kind: string }) => r.kind)).toEqual(['sweep', 'impedance_table'])
    // The stored extension follows the content too.
    expect(rows[0].storage_key).toMatch(/\.wav$/)
    expect(rows[1].storage_key).toMatch(/\.txt$/)
  })

  it.each([
    ['a relative path climbing out', '../../../../conetrail-escape-1751.wav', 1751],
    ['an absolute path', `/tmp/conetrail-escape-${process.pid}-1752.wav`, 1752],
    ['a Windows path', '..\\..\\conetrail-escape-1753.wav', 1753],
  ])('never uses the original name as a path: %s', async (_label, name, seed) => {
    const bytes = generateRecording({ seed })
    const res = await upload(bytes, name)
    expect(res.status).toBe(202)
    const row = await testDb()('recordings').where({ id: res.body.id }).first()
    // The file lives under the storage root, under our key, with exactly the uploaded bytes.
    expect(row.storage_key).toMatch(KEY_RE)
    const stored = resolve(storageRoot, row.storage_key)
    expect(relative(storageRoot, stored).startsWith('..')).toBe(false)
    expect(readFileSync(stored).equals(Buffer.from(bytes))).toBe(true)
    // Nothing was written where the name points.
    for (const base of [storageRoot, join(inject('dataDir'), 'tmp', 'uploads'), projectRoot]) {
      const target = isAbsolute(name) ? name : resolve(base, name.replaceAll('\\', '/'))
      expect(existsSync(target)).toBe(false)
    }
  })

  it('keeps recordings outside the public folders and never serves them over HTTP', async () => {
    const res = await upload(generateRecording({ seed: 1754 }), 'served.wav')
    expect(res.status).toBe(202)
    const { storage_key: key } = await testDb()('recordings').where({ id: res.body.id }).first()
    for (const pub of [join(projectRoot, 'public'), join(inject('dataDir'), 'build', 'public')]) {
      expect(relative(pub, storageRoot).startsWith('..')).toBe(true)
      if (existsSync(pub)) expect(readdirSync(pub, { recursive: true }).some((f) => String(f).endsWith('.wav'))).toBe(false)
    }
    for (const path of [`/${key}`, `/recordings/${key}`, `/_nuxt/../recordings/${key}`]) {
      const r = await fetch(new URL(path, host))
      const body = Buffer.from(await r.arrayBuffer())
      expect(body.subarray(0, 4).toString()).not.toBe('RIFF')
    }
  })
})
