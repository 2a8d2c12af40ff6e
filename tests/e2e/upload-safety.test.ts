import { existsSync, readdirSync, readFileSync } from 'node:fs'
import { isAbsolute, join, relative, resolve } from 'node:path'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { ReturnAttachmentView, ReturnCategoryView, ReturnView } from '../../shared/types/returns'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording, rawMultipart, type RawPart } from '../support/upload'

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
/** 10 Hz to 4.7 kHz: it covers the product's band (up to the top of its 3 kHz sensitivity band). */
function impedanceTable(): string {
  return Array.from({ length: 45 }, (_, i) => {
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

/** Sends a hand-built multipart body to the upload route with the station's token. */
async function uploadRaw(parts: RawPart[]): Promise<{ status: number; body: { message: string; data: { code: string } } }> {
  const { body, contentType } = rawMultipart(parts)
  const res = await fetch(new URL('/api/recordings', host), { method: 'POST', headers: { authorization: `Bearer ${station.token}`, 'content-type': contentType }, body })
  return { status: res.status, body: (await res.json()) as never }
}
const uploadTmp = () => readdirSync(join(inject('dataDir'), 'tmp', 'uploads'))

describe('a multipart body of the wrong shape', () => {
  const fields = (): RawPart[] => [{ name: 'serial', value: unique('SHAPE') }, { name: 'product', value: product.code }]
  const wav = (name = 'file', fileName = 'sweep.wav'): RawPart => ({ name, fileName, value: generateRecording({ seed: 1755 }) })

  // Each of these once answered 413 "larger than the limit": the answer now says what is wrong.
  it.each([
    ['a file part without a Content-Type', () => [...fields(), { ...wav(), type: null }], /"file" has a file name but no Content-Type/],
    ['a small file part without a Content-Type', () => [...fields(), { name: 'file', fileName: 'table.txt', value: '20,6.1\n40,6.3', type: null }], /"file" has a file name but no Content-Type/],
    ['two file parts', () => [...fields(), wav(), wav()], /two file parts named "file"/],
    ['an extra file field beside the file', () => [...fields(), wav(), wav('photo', 'photo.png')], /"photo" is sent as a file/],
    ['a file only in another field', () => [...fields(), wav('recording')], /"recording" is sent as a file/],
    ['too many text fields', () => [...fields(), ...Array.from({ length: 25 }, (_, i) => ({ name: `x${i}`, value: 'y' })), wav()], /more than 20 text fields/],
    ['an oversized text field', () => [...fields(), { name: 'note', value: 'n'.repeat(70 * 1024) }, wav()], /text fields are larger than 64 KB/],
  ] as const)('answers %s with 400 bad_multipart and the reason, and stores nothing', async (_label, parts, reason) => {
    const before = await testDb()('recordings').count({ n: '*' })
    const tmpBefore = uploadTmp()
    const res = await uploadRaw(parts())
    expect([res.status, res.body.data.code]).toEqual([400, 'bad_multipart'])
    expect(res.body.message).toMatch(reason)
    expect(res.body.message).not.toMatch(/MB limit/)
    expect(await testDb()('recordings').count({ n: '*' })).toEqual(before)
    expect(uploadTmp()).toEqual(tmpBefore)
  })

  it('keeps 413 too_large for a file that really is over the limit', async () => {
    const tmpBefore = uploadTmp()
    const res = await uploadRaw([...fields(), { name: 'file', fileName: 'big.wav', value: new Uint8Array(9 * 1024 * 1024) }])
    expect([res.status, res.body.data.code]).toEqual([413, 'too_large'])
    expect(uploadTmp()).toEqual(tmpBefore)
  })
})

describe('numbers in form fields', () => {
  it.each(['0x10', '1e3', '1e1', 'Infinity', '0b10', '12.', '+'])('refuses room temperature %j: only plain decimals are read', async (ambientC) => {
    const before = await testDb()('recordings').count({ n: '*' })
    const res = await postRecording(host, { token: station.token }, { serial: unique('NUM'), product: product.code, ambientC }, { bytes: impedanceTable(), name: 'z.txt' })
    expect([res.status, res.body.data?.code]).toEqual([400, 'invalid_input'])
    expect(res.body.message).toContain('Room temperature (ambientC) must be a number of °C')
    expect(await testDb()('recordings').count({ n: '*' })).toEqual(before)
  })

  it.each([
    ['12,5', 12.5],
    [' 12', 12],
    ['-3.25', -3.25],
  ])('reads room temperature %j as %d °C', async (ambientC, value) => {
    // Each its own table (a different last point), so none is a duplicate of another.
    const table = `${impedanceTable()}\n30000,${(7 + value / 100).toFixed(4)}`
    const res = await postRecording(host, { token: station.token }, { serial: unique('NUM'), product: product.code, ambientC }, { bytes: table, name: 'z.txt' })
    expect(res.status).toBe(202)
    expect(Number((await testDb()('recordings').where({ id: res.body.id }).first()).ambient_c)).toBe(value)
  })

  it.each(['0x10', '1e1', 'Infinity', ' '])('refuses a query number %j (the recent list\'s limit)', async (limit) => {
    const res = await fetch(new URL(`/api/recordings?limit=${encodeURIComponent(limit)}`, host), { headers: { authorization: `Bearer ${station.token}` } })
    if (limit.trim() === '') {
      // An empty field is "not given": the default limit, never 0.
      expect(res.status).toBe(200)
    } else {
      expect(res.status).toBe(400)
      expect(((await res.json()) as { data: { code: string } }).data.code).toBe('invalid_input')
    }
  })
})

describe('an attachment whose name lies about its type', () => {
  /** A valid 1×1 PNG (signature, IHDR, IDAT, IEND; PNG spec ISO/IEC 15948). */
  const PNG = Buffer.from('89504e470d0a1a0a0000000d4948445200000001000000010806000000' + '1f15c4890000000d49444154789c6360000002000005' + '0001e226059b0000000049454e44ae426082', 'hex')
  let support = ''
  let returnId = 0

  beforeAll(async () => {
    support = (await signIn(host, demoEmail('support'), DEMO_PASSWORD)).cookie
    const serial = unique('ATT')
    expect((await postRecording(host, { token: station.token }, { serial, product: product.code }, { bytes: generateRecording({ seed: 1756 }), name: 'f.wav' })).status).toBe(202)
    const get = (path: string) => fetch(new URL(path, host), { headers: { cookie: support } })
    const [category] = (await (await get('/api/return-categories')).json()) as ReturnCategoryView[]
    const res = await fetch(new URL('/api/returns', host), {
      method: 'POST',
      headers: { cookie: support, 'content-type': 'application/json' },
      body: JSON.stringify({ serial, receivedOn: new Date().toISOString().slice(0, 10), categoryId: category!.id }),
    })
    expect(res.status).toBe(201)
    returnId = ((await res.json()) as ReturnView).id
  })

  it.each([
    ['photo.html', 'photo.png'],
    ['cone.svg', 'cone.png'],
    ['no extension', 'no_extension.png'],
    ['SHOUT.PNG', 'SHOUT.PNG'],
  ])('downloads a PNG uploaded as %s under %s: the extension follows the bytes, the name stays', async (uploaded, downloaded) => {
    const form = new FormData()
    form.append('file', new Blob([PNG]), uploaded)
    const res = await fetch(new URL(`/api/returns/${returnId}/attachments`, host), { method: 'POST', headers: { cookie: support }, body: form })
    expect(res.status).toBe(201)
    const added = (await res.json()) as ReturnAttachmentView
    expect(added.contentType).toBe('image/png')
    const got = await fetch(new URL(`/api/returns/${returnId}/attachments/${added.id}`, host), { headers: { cookie: support } })
    expect(got.headers.get('content-type')).toBe('image/png')
    expect(got.headers.get('content-disposition')).toBe(`attachment; filename="${downloaded}"; filename*=UTF-8''${downloaded}`)
  })
})
