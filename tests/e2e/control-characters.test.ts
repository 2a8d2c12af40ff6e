/**
 * Control characters in text: every route that takes free text refuses a NUL (PostgreSQL cannot
 * store one: it used to answer 500) and a BEL (it would be stored and reach exports) with
 * 400 invalid_input naming the field, and stores nothing. The routes are listed in one table.
 * Seeds 1790–1799 (the upload-safety range).
 */
import { readdirSync } from 'node:fs'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { createMaskDraft } from '../../server/repos/masks'
import type { ReturnCategoryView, ReturnView } from '../../shared/types/returns'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording, rawMultipart, type RawPart } from '../support/upload'

const host = await useTestServer()

type Who = 'admin' | 'engineer' | 'quality' | 'support' | 'station' | 'nobody'
/** What a case sends: a JSON body, a query string, or multipart fields and a file. */
type Send = { json: unknown } | { query: Record<string, string> } | { parts: RawPart[] }

const cookies: Partial<Record<Who, string>> = {}
let station: { id: number; token: string }
let product: { id: number; code: string }
const serial = unique('CTRL')
let returnId: number
let categoryId: number
let maskId: number
const PNG = Buffer.from('89504e470d0a1a0a0000000d4948445200000001000000010806000000', 'hex')
/** The shape of an invitation link's token; none exists with it, and the body is refused before it is looked up. */
const SOME_TOKEN = 'A'.repeat(43)

const file = (name = 'sweep.wav', value: string | Uint8Array = 'not read'): RawPart => ({ name: 'file', fileName: name, value })
const text = (fields: Record<string, string>): RawPart[] => Object.entries(fields).map(([name, value]) => ({ name, value }))

/**
 * Every free-text input: the route, who may call it, the field and what a request with `bad` in
 * that field sends (the other fields valid, so the control character is the only fault).
 */
const ROUTES: { route: string; as: Who; path: () => string; field: string; send: (bad: string) => Send }[] = [
  { route: 'POST /api/recordings', as: 'station', path: () => '/api/recordings', field: 'note', send: (bad) => ({ parts: [...text({ serial: `${serial}-N`, product: product.code, note: bad }), file()] }) },
  { route: 'POST /api/recordings', as: 'station', path: () => '/api/recordings', field: 'file', send: (bad) => ({ parts: [...text({ serial: `${serial}-F`, product: product.code }), file(`sweep${bad}.wav`)] }) },
  { route: 'POST /api/returns/:id/retest', as: 'support', path: () => `/api/returns/${returnId}/retest`, field: 'note', send: (bad) => ({ parts: [...text({ station: String(station.id), note: bad }), file()] }) },
  { route: 'POST /api/returns/:id/retest', as: 'support', path: () => `/api/returns/${returnId}/retest`, field: 'serial', send: (bad) => ({ parts: [...text({ station: String(station.id), serial: bad }), file()] }) },
  { route: 'POST /api/returns/:id/retest', as: 'support', path: () => `/api/returns/${returnId}/retest`, field: 'file', send: (bad) => ({ parts: [...text({ station: String(station.id) }), file(`return${bad}.wav`)] }) },
  { route: 'POST /api/returns/:id/attachments', as: 'support', path: () => `/api/returns/${returnId}/attachments`, field: 'file', send: (bad) => ({ parts: [file(`photo${bad}.png`, PNG)] }) },
  { route: 'POST /api/returns', as: 'support', path: () => '/api/returns', field: 'customerRef', send: (bad) => ({ json: { serial, receivedOn: today(), categoryId, customerRef: bad } }) },
  { route: 'POST /api/returns', as: 'support', path: () => '/api/returns', field: 'complaint', send: (bad) => ({ json: { serial, receivedOn: today(), categoryId, complaint: bad } }) },
  { route: 'PATCH /api/returns/:id', as: 'support', path: () => `/api/returns/${returnId}`, field: 'customerRef', send: (bad) => ({ json: { customerRef: bad } }) },
  { route: 'PATCH /api/returns/:id', as: 'support', path: () => `/api/returns/${returnId}`, field: 'complaint', send: (bad) => ({ json: { complaint: bad } }) },
  { route: 'POST /api/returns/:id/close', as: 'support', path: () => `/api/returns/${returnId}/close`, field: 'cause', send: (bad) => ({ json: { disposition: 'confirmed_defect', cause: bad } }) },
  { route: 'POST /api/returns/:id/close', as: 'support', path: () => `/api/returns/${returnId}/close`, field: 'causeClass', send: (bad) => ({ json: { disposition: 'confirmed_defect', cause: 'coil', causeClass: bad } }) },
  { route: 'POST /api/returns/:id/close', as: 'support', path: () => `/api/returns/${returnId}/close`, field: 'note', send: (bad) => ({ json: { disposition: 'other', note: bad } }) },
  { route: 'GET /api/returns', as: 'support', path: () => '/api/returns', field: 'serial', send: (bad) => ({ query: { serial: bad } }) },
  { route: 'POST /api/return-categories', as: 'admin', path: () => '/api/return-categories', field: 'label', send: (bad) => ({ json: { label: bad } }) },
  { route: 'PATCH /api/return-categories/:id', as: 'admin', path: () => `/api/return-categories/${categoryId}`, field: 'label', send: (bad) => ({ json: { label: bad } }) },
  { route: 'PUT /api/causes/:failureClass', as: 'engineer', path: () => '/api/causes/fsHz', field: 'label', send: (bad) => ({ json: { label: bad, causes: ['spider'] } }) },
  { route: 'PUT /api/causes/:failureClass', as: 'engineer', path: () => '/api/causes/fsHz', field: 'causes.0', send: (bad) => ({ json: { causes: [bad] } }) },
  { route: 'POST /api/stations', as: 'engineer', path: () => '/api/stations', field: 'name', send: (bad) => ({ json: { name: bad } }) },
  { route: 'POST /api/stations', as: 'engineer', path: () => '/api/stations', field: 'line', send: (bad) => ({ json: { name: unique('St'), line: bad } }) },
  { route: 'PATCH /api/stations/:id', as: 'engineer', path: () => `/api/stations/${station.id}`, field: 'name', send: (bad) => ({ json: { name: bad } }) },
  { route: 'PATCH /api/stations/:id', as: 'engineer', path: () => `/api/stations/${station.id}`, field: 'line', send: (bad) => ({ json: { line: bad } }) },
  { route: 'POST /api/products', as: 'engineer', path: () => '/api/products', field: 'name', send: (bad) => ({ json: { code: unique('P'), name: bad, ratedImpedanceOhm: 8 } }) },
  { route: 'POST /api/products', as: 'engineer', path: () => '/api/products', field: 'nominalSize', send: (bad) => ({ json: { code: unique('P'), name: 'Woofer', ratedImpedanceOhm: 8, nominalSize: bad } }) },
  { route: 'PATCH /api/products/:code', as: 'engineer', path: () => `/api/products/${product.code}`, field: 'name', send: (bad) => ({ json: { name: bad } }) },
  { route: 'POST /api/masks', as: 'engineer', path: () => '/api/masks', field: 'name', send: (bad) => ({ json: { product: product.code, goldenSerials: ['G-001', 'G-002', 'G-003', 'G-004', 'G-005'], name: bad } }) },
  { route: 'PATCH /api/masks/:id', as: 'engineer', path: () => `/api/masks/${maskId}`, field: 'name', send: (bad) => ({ json: { name: bad } }) },
  { route: 'POST /api/masks/:id/release', as: 'engineer', path: () => `/api/masks/${maskId}/release`, field: 'comment', send: (bad) => ({ json: { comment: `checked ${bad}` } }) },
  { route: 'POST /api/masks/:id/retire', as: 'engineer', path: () => `/api/masks/${maskId}/retire`, field: 'comment', send: (bad) => ({ json: { comment: bad } }) },
  { route: 'GET /api/audit', as: 'admin', path: () => '/api/audit', field: 'actor', send: (bad) => ({ query: { actor: bad } }) },
  { route: 'GET /api/audit', as: 'admin', path: () => '/api/audit', field: 'subject', send: (bad) => ({ query: { subject: bad } }) },
  { route: 'GET /api/alerts', as: 'quality', path: () => '/api/alerts', field: 'product', send: (bad) => ({ query: { product: bad } }) },
  { route: 'POST /api/invitations/accept/:token', as: 'nobody', path: () => `/api/invitations/accept/${SOME_TOKEN}`, field: 'displayName', send: (bad) => ({ json: { displayName: `Ann ${bad}`, password: 'a long enough password' } }) },
  { route: 'POST /api/invitations/accept/:token', as: 'nobody', path: () => `/api/invitations/accept/${SOME_TOKEN}`, field: 'password', send: (bad) => ({ json: { displayName: 'Ann', password: `a long enough ${bad}` } }) },
  { route: 'POST /api/auth/login', as: 'nobody', path: () => '/api/auth/login', field: 'password', send: (bad) => ({ json: { email: demoEmail('support'), password: `${DEMO_PASSWORD}${bad}` } }) },
  { route: 'POST /api/lots/:code/send', as: 'quality', path: () => '/api/lots/NO-SUCH-LOT/send', field: 'message', send: (bad) => ({ json: { recipients: ['buyer@example.test'], message: bad } }) },
  { route: 'POST /api/units/:serial/certificate/send', as: 'support', path: () => `/api/units/${serial}/certificate/send`, field: 'message', send: (bad) => ({ json: { to: 'buyer@example.test', message: bad } }) },
]

/** The two control characters sent: NUL (cannot be stored at all) and BEL (could be). */
const CONTROLS = [
  ['NUL', 'before\u0000after'],
  ['BEL', 'ring\u0007ring'],
] as const

const today = () => new Date().toISOString().slice(0, 10)

/** Every table these routes write to, fingerprinted whole: a refused request leaves each exactly as it was. */
const TABLES = ['users', 'invitations', 'products', 'masks', 'stations', 'station_profiles', 'units', 'recordings', 'returns', 'return_attachments', 'return_categories', 'likely_causes', 'audit_log']
async function fingerprint(): Promise<Record<string, string>> {
  const db = testDb()
  const rows = await Promise.all(TABLES.map((t) => db.raw(`select count(*) || ':' || md5(coalesce(string_agg(x::text, '|' order by x::text), '')) as f from ${t} x`)))
  return Object.fromEntries(TABLES.map((t, i) => [t, rows[i].rows[0].f as string]))
}
/** Temporary upload files left behind (a refused upload removes its own). */
const leftovers = () => readdirSync(join(inject('dataDir'), 'tmp', 'uploads'))

async function send(as: Who, method: string, path: string, what: Send): Promise<Response> {
  const headers: Record<string, string> = { accept: 'application/json' }
  if (as === 'station') headers.authorization = `Bearer ${station.token}`
  else if (as !== 'nobody') headers.cookie = cookies[as]!
  const url = new URL(path, host)
  let body: BodyInit | undefined
  if ('query' in what) for (const [k, v] of Object.entries(what.query)) url.searchParams.set(k, v)
  else if ('json' in what) {
    headers['content-type'] = 'application/json'
    body = JSON.stringify(what.json)
  } else {
    const raw = rawMultipart(what.parts)
    headers['content-type'] = raw.contentType
    body = raw.body
  }
  return fetch(url, { method, headers, body })
}

beforeAll(async () => {
  for (const role of ['admin', 'engineer', 'quality', 'support'] as const) cookies[role] = (await signIn(host, demoEmail(role), DEMO_PASSWORD)).cookie
  product = await makeProduct(unique('P'), 6)
  station = await makeStation()
  const up = await postRecording(host, { token: station.token }, { serial, product: product.code }, { bytes: generateRecording({ seed: 1790 }), name: 'factory.wav' })
  expect(up.status).toBe(202)
  const cats = (await (await send('support', 'GET', '/api/return-categories', { query: {} })).json()) as ReturnCategoryView[]
  categoryId = cats[0]!.id
  const registered = await send('support', 'POST', '/api/returns', { json: { serial, receivedOn: today(), categoryId } })
  expect(registered.status).toBe(201)
  returnId = ((await registered.json()) as ReturnView).id
  maskId = await createMaskDraft(testDb(), { productId: product.id, name: 'control characters', limits: { scalars: { fsHz: { low: 20, high: 80 } }, curves: {} }, createdBy: null })
})

afterAll(() => closeTestDb())

describe('a control character in a text field', () => {
  const cases = ROUTES.flatMap((r) => CONTROLS.map(([label, bad]) => ({ ...r, label, bad })))

  it.each(cases)('$route refuses $label in $field with 400 invalid_input naming it, and stores nothing', async ({ as, route, path, field, send: make, bad }) => {
    const before = await fingerprint()
    const tmpBefore = leftovers()
    const [method] = route.split(' ')
    const res = await send(as, method!, path(), make(bad))
    const body = (await res.json()) as { message: string; data: { code: string; issues?: { path: string; message: string }[] } }
    expect([res.status, body.data.code]).toEqual([400, 'invalid_input'])
    expect(body.data.issues!.map((i) => i.path)).toContain(field)
    expect(body.message).toContain('must not hold control characters')
    expect(await fingerprint()).toEqual(before)
    expect(leftovers()).toEqual(tmpBefore)
  })

  it('takes tab and line breaks in free text', async () => {
    const res = await send('support', 'PATCH', `/api/returns/${returnId}`, { json: { complaint: 'Rattles\ton bass.\r\nSecond line.' } })
    expect(res.status).toBe(200)
    expect(((await res.json()) as ReturnView).complaint).toBe('Rattles\ton bass.\r\nSecond line.')
  })

  it('reads a scanned serial in the search box without its control characters, as a scanner sends them', async () => {
    // The search box (and the return form's serial) take what a scanner sends: its control
    // characters are cut, never stored, and the serial is found.
    const res = await send('support', 'GET', '/api/units', { query: { q: `\u0000${serial}\u001d\r\n` } })
    expect(res.status).toBe(200)
    expect(JSON.stringify(await res.json())).toContain(serial)
  })
})
