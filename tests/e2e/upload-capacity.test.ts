/**
 * Uploads take bounded memory by design: a server process receives and checks at most
 * CONETRAIL_UPLOAD_SLOTS uploads at once (each streams to disk and is validated block by block);
 * one more is refused with 503 `busy` and Retry-After before anything is read or stored. The
 * streamed check refuses what the engine refuses, with the same codes.
 */
import { createHash } from 'node:crypto'
import { mkdirSync, readdirSync, rmSync } from 'node:fs'
import { request, type ClientRequest } from 'node:http'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { startExtraServer, type ExtraServer } from '../support/server'
import { postRecording } from '../support/upload'

// Seeds 1810–1829 (this file's range).
const host = await useTestServer()
const SLOTS = 8
const slotsDir = join(inject('dataDir'), `upload-slots-${process.pid}`)
const tmpUploads = join(slotsDir, 'tmp', 'uploads')
let slotted: ExtraServer
let station: { id: number; token: string }
let product: { code: string }

beforeAll(async () => {
  rmSync(slotsDir, { recursive: true, force: true })
  mkdirSync(slotsDir, { recursive: true })
  slotted = await startExtraServer({ dataDir: slotsDir, env: { CONETRAIL_UPLOAD_SLOTS: String(SLOTS) } })
  product = await makeProduct(unique('P'), 6)
  station = await makeStation()
})

afterAll(async () => {
  await slotted?.stop()
  rmSync(slotsDir, { recursive: true, force: true })
  await closeTestDb()
})

const BOUNDARY = 'conetrail-slow-upload'

/**
 * An upload whose body stops half-way: its headers, its fields and the first 64 kB of the file
 * arrive, the rest never does (a station on a slow link). It holds its slot until it is aborted.
 */
function stalledUpload(baseUrl: string, serial: string, wav: Uint8Array): ClientRequest {
  const head = Buffer.from(
    [`serial`, `product`]
      .map((name) => `--${BOUNDARY}\r\nContent-Disposition: form-data; name="${name}"\r\n\r\n${name === 'serial' ? serial : product.code}\r\n`)
      .join('') + `--${BOUNDARY}\r\nContent-Disposition: form-data; name="file"; filename="slow.wav"\r\nContent-Type: application/octet-stream\r\n\r\n`,
  )
  const tail = Buffer.from(`\r\n--${BOUNDARY}--\r\n`)
  const url = new URL('/api/recordings', baseUrl)
  const req = request({
    host: url.hostname,
    port: url.port,
    method: 'POST',
    path: url.pathname,
    headers: {
      authorization: `Bearer ${station.token}`,
      'content-type': `multipart/form-data; boundary=${BOUNDARY}`,
      'content-length': head.length + wav.length + tail.length,
    },
  })
  req.on('error', () => {}) // aborted on purpose
  req.write(head)
  req.write(wav.subarray(0, 64 * 1024))
  return req
}

async function until(what: string, check: () => boolean | Promise<boolean>, timeoutMs = 15_000): Promise<void> {
  const end = Date.now() + timeoutMs
  while (!(await check())) {
    if (Date.now() > end) throw new Error(`still not ${what} after ${timeoutMs} ms`)
    await new Promise((r) => setTimeout(r, 100))
  }
}

const tempFiles = () => {
  try {
    return readdirSync(tmpUploads)
  } catch {
    return []
  }
}
const sha256 = (b: Uint8Array) => createHash('sha256').update(b).digest('hex')

describe('upload slots', () => {
  it(`refuses the 9th concurrent upload beyond ${SLOTS} slots with 503 busy and Retry-After, storing nothing`, async () => {
    const stalled = Array.from({ length: SLOTS }, (_, i) => stalledUpload(slotted.baseUrl, unique(`SLOW${i}`), generateRecording({ seed: 1810 })))
    try {
      // Each holds its slot once its file has begun to stream to disk.
      await until(`${SLOTS} uploads in progress`, () => tempFiles().length === SLOTS)
      const before = Number((await testDb()('recordings').count({ n: '*' }))[0]!.n)
      const serial = unique('NINTH')
      const bytes = generateRecording({ seed: 1811 })
      const form = new FormData()
      form.append('serial', serial)
      form.append('product', product.code)
      form.append('file', new Blob([Uint8Array.from(bytes)]), 'ninth.wav')
      const res = await fetch(new URL('/api/recordings', slotted.baseUrl), { method: 'POST', headers: { authorization: `Bearer ${station.token}` }, body: form })
      const body = (await res.json()) as { data: { code: string; retryAfterS?: number } }
      expect(res.status).toBe(503)
      expect(body.data.code).toBe('busy')
      expect(res.headers.get('retry-after')).toBe('2')
      expect(body.data.retryAfterS).toBe(2)
      // Nothing stored: no unit, no recording, no file of its own in the temporary folder.
      expect(await testDb()('units').where({ serial }).first()).toBeUndefined()
      expect(await testDb()('recordings').where({ sha256: sha256(bytes) }).first()).toBeUndefined()
      expect(Number((await testDb()('recordings').count({ n: '*' }))[0]!.n)).toBe(before)
      expect(tempFiles()).toHaveLength(SLOTS)
    } finally {
      for (const req of stalled) req.destroy()
    }
    // The slots come back when the stalled uploads go away, and their temporary files with them.
    await until('every temporary file removed', () => tempFiles().length === 0)
    const again = await postRecording(slotted.baseUrl, { token: station.token }, { serial: unique('AFTER'), product: product.code }, { bytes: generateRecording({ seed: 1812 }), name: 'after.wav' })
    expect(again.status).toBe(202)
  })

  it('gives each slot back after its answer: more uploads than slots, one after another, all pass', async () => {
    for (let i = 0; i < SLOTS + 2; i++) {
      const res = await postRecording(slotted.baseUrl, { token: station.token }, { serial: unique('SEQ'), product: product.code }, { bytes: generateRecording({ seed: 1813 + i }), name: 'seq.wav' })
      expect(res.status).toBe(202)
    }
  })
})

describe('the streamed upload check', () => {
  it.each([
    ['a dead drive-voltage probe (the unit plays, its current flows)', () => generateRecording({ defect: 'dead_drive_probe', seed: 1825 }), 'drive_probe_fault'],
    ['a dead current lead (the unit plays, no current reads)', () => generateRecording({ defect: 'dead_sense_probe', seed: 1827 }), 'sense_probe_fault'],
    ['a second data chunk', () => {
      const good = generateRecording({ seed: 1826 })
      const extra = Buffer.concat([Buffer.from('data'), Buffer.from([96, 0, 0, 0]), good.subarray(44, 44 + 96)])
      const b = Buffer.concat([good, extra])
      b.writeUInt32LE(b.length - 8, 4)
      return b
    }, 'duplicate_chunk'],
    ['a RIFF size of 0xFFFFFFFE with intact chunks', () => {
      const b = generateRecording({ seed: 1827 })
      b.writeUInt32LE(0xfffffffe, 4)
      return b
    }, 'size_mismatch'],
  ] as const)('refuses %s with 422 and stores nothing', async (_name, make, code) => {
    const bytes = make()
    const serial = unique('REFUSED')
    const res = await postRecording(host, { token: station.token }, { serial, product: product.code }, { bytes, name: 'refused.wav' })
    expect(res.status).toBe(422)
    expect(res.body.data?.code).toBe(code)
    expect(await testDb()('units').where({ serial }).first()).toBeUndefined()
    expect(await testDb()('recordings').where({ sha256: sha256(bytes) }).first()).toBeUndefined()
  })

  it('refuses an impedance table over 4 MB before reading it whole (413 too_large)', async () => {
    const line = '1000.000,6.500,10.000\n'
    const big = line.repeat(Math.ceil((4 * 1024 * 1024 + 1) / line.length))
    const serial = unique('BIGTABLE')
    const res = await postRecording(host, { token: station.token }, { serial, product: product.code }, { bytes: big, name: 'table.csv' })
    expect(res.status).toBe(413)
    expect(res.body.data?.code).toBe('too_large')
    expect(await testDb()('units').where({ serial }).first()).toBeUndefined()
  })
})
