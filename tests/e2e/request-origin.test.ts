/**
 * State-changing /api requests from a browser must come from this application's own pages: a
 * foreign Origin (or, without one, a Sec-Fetch-Site other than same-origin) answers 403
 * `cross_origin`, and a body that is not JSON (or multipart, for uploads) answers 415. Station
 * software with its bearer token and tools that send neither header are not affected.
 * Seeds 2000–2009 (this file's range).
 */
import { mkdirSync, rmSync } from 'node:fs'
import { join } from 'node:path'
import { fetch } from '@nuxt/test-utils/e2e'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { generateRecording } from '../../fixtures/generator'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { startExtraServer, type ExtraServer } from '../support/server'
import { postRecording } from '../support/upload'

const host = await useTestServer()
const own = new URL(host).origin
/** Another port of the same host: same-site for a browser, but another origin. */
const sibling = `${new URL(host).protocol}//${new URL(host).hostname}:${Number(new URL(host).port) + 1}`
let admin: string

beforeAll(async () => {
  admin = (await signIn(host, demoEmail('admin'), DEMO_PASSWORD)).cookie
})
afterAll(closeTestDb)

const outsider = () => `${unique('csrf').toLowerCase()}@outside.example`
const invitationsTo = async (email: string) => Number((await testDb()('invitations').where({ email }).count({ n: '*' }))[0]!.n)

async function invite(email: string, headers: Record<string, string>, body: BodyInit = JSON.stringify({ email, role: 'admin' })) {
  const res = await fetch('/api/invitations', { method: 'POST', headers: { cookie: admin, 'content-type': 'application/json', ...headers }, body })
  return { status: res.status, code: ((await res.json()) as { data?: { code: string } }).data?.code }
}

describe('the origin of a state-changing request', () => {
  it.each([
    ['another port of the same host', { origin: sibling }],
    ['another site', { origin: 'https://elsewhere.example' }],
    ['an opaque origin ("null": a sandboxed frame, a redirect)', { origin: 'null' }],
    ['the right host over the wrong scheme', { origin: own.replace('http:', 'https:') }],
    ['no Origin, Sec-Fetch-Site cross-site', { 'sec-fetch-site': 'cross-site' }],
    ['no Origin, Sec-Fetch-Site same-site', { 'sec-fetch-site': 'same-site' }],
    ['a foreign Origin beside a same-origin Sec-Fetch-Site', { origin: sibling, 'sec-fetch-site': 'same-origin' }],
  ])('refuses %s: 403 cross_origin, nothing changes', async (_, headers) => {
    const email = outsider()
    expect(await invite(email, headers)).toEqual({ status: 403, code: 'cross_origin' })
    expect(await invitationsTo(email)).toBe(0)
  })

  it.each([
    ['its own Origin (what the Nuxt client sends)', { origin: own }],
    ['no Origin, Sec-Fetch-Site same-origin', { 'sec-fetch-site': 'same-origin' }],
    ['neither header (curl, scripts)', {}],
  ])('accepts %s', async (_, headers) => {
    const email = outsider()
    expect((await invite(email, headers)).status).toBe(201)
    expect(await invitationsTo(email)).toBe(1)
  })

  it('refuses every state-changing method, and lets reads through', async () => {
    for (const method of ['PUT', 'PATCH', 'DELETE']) {
      const res = await fetch('/api/people/1', { method, headers: { cookie: admin, origin: sibling, 'content-type': 'application/json' }, body: '{"active":true}' })
      expect([method, res.status]).toEqual([method, 403])
    }
    expect((await fetch('/api/people', { headers: { cookie: admin, origin: sibling, 'sec-fetch-site': 'same-site' } })).status).toBe(200)
  })

  it('protects the sign-in itself: a foreign page cannot sign the browser in to an account of its choosing', async () => {
    const res = await fetch('/api/auth/login', {
      method: 'POST',
      headers: { 'content-type': 'application/json', origin: sibling },
      body: JSON.stringify({ email: demoEmail('technician'), password: DEMO_PASSWORD }),
    })
    expect(res.status).toBe(403)
    expect(res.headers.getSetCookie().filter((c) => c.startsWith('nuxt-session=') && !/nuxt-session=;/.test(c))).toEqual([])
    expect((await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).status).toBe(200)
  })

  it('trusts the proxy\'s X-Forwarded-Host and -Proto for its own origin (CONETRAIL_TRUST_PROXY=1 on the test server)', async () => {
    const email = outsider()
    const proxied = { origin: 'https://conetrail.factory.example', 'x-forwarded-host': 'conetrail.factory.example', 'x-forwarded-proto': 'https' }
    expect((await invite(email, proxied)).status).toBe(201)
    expect(await invite(outsider(), { ...proxied, origin: 'https://other.factory.example' })).toEqual({ status: 403, code: 'cross_origin' })
  })
})

describe('station software', () => {
  it('uploads with its bearer token whatever the browser headers say (a page cannot send that header across sites)', async () => {
    const product = await makeProduct(unique('P'), 8)
    const station = await makeStation()
    const plain = await postRecording(host, { token: station.token }, { serial: unique('ORIG'), product: product.code }, { bytes: generateRecording({ seed: 2000 }), name: 'a.wav' })
    expect(plain.status).toBe(202)

    const form = new FormData()
    form.append('serial', unique('ORIG'))
    form.append('product', product.code)
    form.append('file', new Blob([Buffer.from(generateRecording({ seed: 2001 }))]), 'b.wav')
    const res = await fetch('/api/recordings', { method: 'POST', headers: { authorization: `Bearer ${station.token}`, origin: sibling, 'sec-fetch-site': 'cross-site' }, body: form })
    expect(res.status).toBe(202)
  })
})

describe('the body of a state-changing request', () => {
  it.each([
    ['a urlencoded form', 'application/x-www-form-urlencoded', (email: string) => new URLSearchParams({ email, role: 'admin' }).toString()],
    ['text/plain holding JSON', 'text/plain', (email: string) => JSON.stringify({ email, role: 'admin' })],
    ['multipart, where the route reads JSON', 'multipart/form-data; boundary=x', (email: string) => `--x\r\nContent-Disposition: form-data; name="email"\r\n\r\n${email}\r\n--x--\r\n`],
    ['a JSON variant the route does not read', 'application/json-patch+json', (email: string) => JSON.stringify({ email, role: 'admin' })],
  ])('refuses %s: 415 unsupported_media_type, nothing changes', async (_, type, body) => {
    const email = outsider()
    expect(await invite(email, { 'content-type': type }, body(email))).toEqual({ status: 415, code: 'unsupported_media_type' })
    expect(await invitationsTo(email)).toBe(0)
  })

  it('refuses a body without a content type (a JSON blob sent as is)', async () => {
    const email = outsider()
    const res = await fetch('/api/invitations', { method: 'POST', headers: { cookie: admin }, body: new Blob([JSON.stringify({ email, role: 'admin' })]) })
    expect(res.status).toBe(415)
    expect(((await res.json()) as { data: { code: string } }).data.code).toBe('unsupported_media_type')
    expect(await invitationsTo(email)).toBe(0)
  })

  it('accepts JSON with a charset', async () => {
    const email = outsider()
    expect((await invite(email, { 'content-type': 'application/json; charset=utf-8' })).status).toBe(201)
  })

  it('an upload route takes multipart only (its own reader answers 415 not_multipart)', async () => {
    const tech = (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie
    const res = await fetch('/api/recordings', { method: 'POST', headers: { cookie: tech, 'content-type': 'application/x-www-form-urlencoded' }, body: 'serial=X-1' })
    expect(res.status).toBe(415)
    expect(((await res.json()) as { data: { code: string } }).data.code).toBe('not_multipart')
  })

  it('keeps bodyless posts working without a content type (sign-out, token rotation)', async () => {
    const engineer = (await signIn(host, demoEmail('engineer'), DEMO_PASSWORD)).cookie
    const station = await makeStation()
    const rotated = await fetch(`/api/stations/${station.id}/token`, { method: 'POST', headers: { cookie: engineer, origin: own } })
    expect(rotated.status).toBe(200)
    expect((await fetch('/api/auth/logout', { method: 'POST', headers: { cookie: engineer, origin: own } })).status).toBe(200)
  })
})

describe('CONETRAIL_PUBLIC_URL', () => {
  let server: ExtraServer
  const PUBLIC = 'https://conetrail.plant.example'
  const dataDir = join(inject('dataDir'), `public-url-${process.pid}`)
  beforeAll(async () => {
    mkdirSync(dataDir, { recursive: true })
    server = await startExtraServer({ dataDir, env: { CONETRAIL_PUBLIC_URL: `${PUBLIC}/`, CONETRAIL_TRUST_PROXY: '0' } })
  })
  afterAll(async () => {
    await server?.stop()
    rmSync(dataDir, { recursive: true, force: true })
  })

  const login = (origin: string, extra: Record<string, string> = {}) =>
    globalThis.fetch(new URL('/api/auth/login', server.baseUrl), {
      method: 'POST',
      headers: { 'content-type': 'application/json', origin, ...extra },
      body: JSON.stringify({ email: demoEmail('support'), password: DEMO_PASSWORD }),
    })

  it('is an own origin, beside the address the request came to', async () => {
    expect((await login(PUBLIC)).status).toBe(200)
    expect((await login(new URL(server.baseUrl).origin)).status).toBe(200)
    expect((await login('https://conetrail.other.example')).status).toBe(403)
  })

  it('without a trusted proxy, forwarded headers cannot make a foreign origin look like our own', async () => {
    const res = await login('https://evil.example', { 'x-forwarded-host': 'evil.example', 'x-forwarded-proto': 'https' })
    expect(res.status).toBe(403)
  })
})
