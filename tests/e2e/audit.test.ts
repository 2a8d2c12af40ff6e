import { fetch } from '@nuxt/test-utils/e2e'
import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { ROLES } from '../../shared/utils/roles'
import type { AuditPage } from '../../shared/types/people'
import type { StationView } from '../../shared/types/api'
import { signIn, useTestServer } from '../support/app'
import { makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording } from '../support/upload'

const host = await useTestServer()
let admin: string
const started = new Date(Date.now() - 1000).toISOString()

beforeAll(async () => {
  admin = (await signIn(host, demoEmail('admin'), DEMO_PASSWORD)).cookie
})

async function audit(query: Record<string, string | number>, cookie = admin) {
  const res = await fetch(`/api/audit?${new URLSearchParams(Object.entries(query).map(([k, v]) => [k, String(v)]))}`, { headers: { cookie } })
  return { status: res.status, body: (await res.json()) as AuditPage & { data?: { code: string } } }
}

describe('the audit log', () => {
  it('records a failed sign-in with the e-mail tried and never the password, and a successful one with its address', async () => {
    const secret = `never-log-${unique('pw')}`
    const res = await fetch('/api/auth/login', { method: 'POST', headers: { 'content-type': 'application/json', 'x-forwarded-for': '198.51.100.7' }, body: JSON.stringify({ email: demoEmail('support'), password: secret }) })
    expect(res.status).toBe(401)
    const failed = await audit({ action: 'auth.sign_in_failed', subject: demoEmail('support'), from: started })
    expect(failed.body.entries[0]).toMatchObject({ actor: null, subject: demoEmail('support'), ip: '198.51.100.7', detail: { email: demoEmail('support'), reason: 'wrong_password' } })
    const all = await testDb()('audit_log').whereRaw('detail::text LIKE ?', [`%${secret}%`]).orWhere('comment', 'like', `%${secret}%`)
    expect(all).toEqual([])

    await signIn(host, demoEmail('quality'), DEMO_PASSWORD)
    const ok = await audit({ action: 'auth.sign_in', actor: 'quality@demo', from: started })
    expect(ok.body.entries[0]).toMatchObject({ actor: { email: demoEmail('quality') }, subject: demoEmail('quality') })
  })

  it('records sign-out, station token issue and rotation (never the token)', async () => {
    const { cookie } = await signIn(host, demoEmail('engineer'), DEMO_PASSWORD)
    const name = unique('Audit station')
    const created = await fetch('/api/stations', { method: 'POST', headers: { cookie, 'content-type': 'application/json' }, body: JSON.stringify({ name, line: 'A', profile: {} }) })
    const station = (await created.json()) as { id: number; token: string }
    expect(created.status, JSON.stringify(station)).toBe(201)
    const rotated = (await (await fetch(`/api/stations/${station.id}/token`, { method: 'POST', headers: { cookie } })).json()) as { token: string }
    await fetch('/api/auth/logout', { method: 'POST', headers: { cookie } })

    const rows = (await audit({ subject: name })).body.entries
    expect(rows.map((r) => r.action)).toEqual(['station.token_rotate', 'station.token_issue'])
    expect(rows.every((r) => r.actor?.email === demoEmail('engineer'))).toBe(true)
    expect(JSON.stringify(rows)).not.toContain(station.token)
    expect(JSON.stringify(rows)).not.toContain(rotated.token)
    expect((await audit({ action: 'auth.sign_out', actor: 'engineer@demo', from: started })).body.total).toBeGreaterThan(0)
  })

  it('a replaced station token stops at once, and the station list shows the last upload', async () => {
    const { cookie } = await signIn(host, demoEmail('admin'), DEMO_PASSWORD)
    const station = await makeStation()
    const product = await makeProduct()
    const listed = async () => ((await (await fetch('/api/stations', { headers: { cookie } })).json()) as StationView[]).find((s) => s.id === station.id)!
    expect((await listed()).lastUploadAt).toBeNull()
    // An impedance table (30 points) made unique by its comment line.
    const serial = unique('AUD')
    const table = [`# ${serial}`, ...Array.from({ length: 30 }, (_, i) => `${(20 * 1.25 ** i).toFixed(2)}, ${(7 + 20 / (1 + Math.abs(i - 6))).toFixed(3)}`)].join('\n')
    const before = Date.now() - 1000
    const up = await postRecording(host, { token: station.token }, { serial, product: product.code }, { bytes: table, name: 'z.txt' })
    expect(up.status, JSON.stringify(up.body)).toBe(202)
    const last = (await listed()).lastUploadAt
    expect(new Date(last!).getTime()).toBeGreaterThanOrEqual(before)

    const rotated = await fetch(`/api/stations/${station.id}/token`, { method: 'POST', headers: { cookie } })
    const { token } = (await rotated.json()) as { token: string }
    const asStation = (t: string) => fetch('/api/recordings?limit=1', { headers: { authorization: `Bearer ${t}` } })
    expect((await asStation(station.token)).status).toBe(401)
    expect((await asStation(token)).status).toBe(200)
  })

  it('records role changes and (de)activation with before and after', async () => {
    const email = `${unique('audited').toLowerCase()}@example.test`
    const { password_hash } = await testDb()('users').where({ email: demoEmail('technician') }).first('password_hash')
    const [{ id }] = await testDb()('users').insert({ email, display_name: 'Audited Person', password_hash, role: 'technician' }).returning('id')
    const change = (body: unknown) => fetch(`/api/people/${id}`, { method: 'PATCH', headers: { cookie: admin, 'content-type': 'application/json' }, body: JSON.stringify(body) })
    expect((await change({ role: 'support' })).status).toBe(200)
    expect((await change({ active: false })).status).toBe(200)
    expect((await change({ active: true })).status).toBe(200)
    const rows = (await audit({ subject: email })).body.entries
    expect(rows.map((r) => r.action)).toEqual(['user.reactivate', 'user.deactivate', 'user.role_change'])
    expect(rows[2]!.detail).toEqual({ from: 'technician', to: 'support' })
  })

  it('records lot exports (CSV, PDF) with who exported', async () => {
    const product = await makeProduct()
    const code = unique('L-AUD')
    await testDb()('lots').insert({ product_id: product.id, code })
    const { cookie } = await signIn(host, demoEmail('quality'), DEMO_PASSWORD)
    expect((await fetch(`/api/lots/${code}/export.csv`, { headers: { cookie } })).status).toBe(200)
    expect((await fetch(`/api/lots/${code}/report.pdf`, { headers: { cookie } })).status).toBe(200)
    const rows = (await audit({ subject: code })).body.entries
    expect(rows.map((r) => r.action).sort()).toEqual(['lot.export_csv', 'lot.export_pdf'])
    expect(rows.every((r) => r.actor?.email === demoEmail('quality'))).toBe(true)
  })

  it('filters by time range and pages newest first', async () => {
    const future = await audit({ from: new Date(Date.now() + 3_600_000).toISOString() })
    expect(future.body).toMatchObject({ total: 0, entries: [] })
    const page1 = await audit({ pageSize: 2, page: 1 })
    const page2 = await audit({ pageSize: 2, page: 2 })
    expect(page1.body.entries).toHaveLength(2)
    expect(page1.body.total).toBeGreaterThan(3)
    expect(page2.body.entries[0]!.id).not.toBe(page1.body.entries[0]!.id)
    expect(new Date(page1.body.entries[1]!.at).getTime()).toBeGreaterThanOrEqual(new Date(page2.body.entries[0]!.at).getTime())
    expect(page1.body.actions).toEqual(expect.arrayContaining(['auth.sign_in', 'auth.sign_in_failed']))
    expect((await audit({ pageSize: 500 })).status).toBe(400)
  })

  it('takes % and _ in a filter literally', async () => {
    expect((await audit({ subject: '%' })).body.total).toBe(0)
  })

  it('is refused to every role but admin', async () => {
    for (const role of ROLES.filter((r) => r !== 'admin')) {
      const { cookie } = await signIn(host, demoEmail(role), DEMO_PASSWORD)
      expect((await audit({}, cookie)).status, role).toBe(403)
    }
    expect((await fetch('/api/audit')).status).toBe(401)
  })

  it('cannot be changed or deleted, even straight in the database', async () => {
    const [row] = await testDb()('audit_log').orderBy('id', 'desc').limit(1)
    await expect(testDb()('audit_log').where({ id: row.id }).update({ action: 'tampered' })).rejects.toThrow(/append-only/)
    await expect(testDb()('audit_log').where({ id: row.id }).del()).rejects.toThrow(/append-only/)
    expect((await testDb()('audit_log').where({ id: row.id }).first()).action).toBe(row.action)
  })
})
