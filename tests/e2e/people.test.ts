import { randomBytes } from 'node:crypto'
import { fetch } from '@nuxt/test-utils/e2e'
import { beforeAll, describe, expect, inject, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { ROLES } from '../../shared/utils/roles'
import type { InvitationCreated, PersonView } from '../../shared/types/people'
import { hashInvitationToken } from '../../server/repos/invitations'
import { getMailboxMessage, listMailbox } from '../../server/mail/mailbox'
import { signIn, useTestServer } from '../support/app'
import { testDb, unique } from '../support/db'

const host = await useTestServer()
const PASSWORD = 'a long new password'
let admin: string

beforeAll(async () => {
  admin = (await signIn(host, demoEmail('admin'), DEMO_PASSWORD)).cookie
})

const email = (p: string) => `${unique(p).toLowerCase()}@example.test`
const json = (cookie: string | null, method: string, body?: unknown): RequestInit => ({
  method,
  headers: { 'content-type': 'application/json', ...(cookie ? { cookie } : {}) },
  body: body === undefined ? undefined : JSON.stringify(body),
})
async function api<T>(url: string, init: RequestInit): Promise<{ status: number; body: T & { data?: { code: string } } }> {
  const res = await fetch(url, init)
  return { status: res.status, body: (await res.json()) as T & { data?: { code: string } } }
}
const invite = (address: string, role = 'technician') => api<InvitationCreated>('/api/invitations', json(admin, 'POST', { email: address, role }))
const tokenOf = (link: string) => new URL(link).pathname.split('/').at(-1)!
const accept = (token: string, displayName = 'Invited Person', password = PASSWORD) => api<{ email: string }>(`/api/invitations/accept/${token}`, json(null, 'POST', { displayName, password }))
const personId = async (address: string) => Number((await testDb()('users').where({ email: address }).first('id')).id)
const patch = (cookie: string, id: number, body: unknown) => api<PersonView>(`/api/people/${id}`, json(cookie, 'PATCH', body))

/** Makes an account through the real invite → accept flow; returns its id and a session. */
async function person(role: (typeof ROLES)[number]) {
  const address = email(role)
  const { body } = await invite(address, role)
  expect((await accept(tokenOf(body.link))).status).toBe(201)
  const { status, cookie } = await signIn(host, address, PASSWORD)
  expect(status).toBe(200)
  return { id: await personId(address), email: address, cookie }
}

describe('an admin invites someone', () => {
  it('mails a one-time link; the person sets a name and password and signs in with the invited role', async () => {
    const address = email('newcomer')
    const { status, body } = await invite(address, 'quality')
    expect(status).toBe(201)
    expect(body).toMatchObject({ email: address, role: 'quality', status: 'pending', mailed: true, mailError: null })
    expect(body.link).toMatch(new RegExp(`^${host.replace(/\/$/, '')}/invite/[A-Za-z0-9_-]{43}$`))
    const token = tokenOf(body.link)
    // Only the SHA-256 of the token is kept.
    const row = await testDb()('invitations').where({ id: body.id }).first()
    expect(row.token_hash).toMatch(/^[0-9a-f]{64}$/)
    expect(JSON.stringify(row)).not.toContain(token)
    // The e-mail went to the local mail sink with the link in it.
    const dir = inject('mailboxDir')
    const entry = (await listMailbox(dir)).find((m) => m.envelopeTo.includes(address))
    expect(entry?.subject).toBe('Your Conetrail account')
    expect((await getMailboxMessage(dir, entry!.id))?.text).toContain(body.link)

    const shown = await api<{ email: string; role: string }>(`/api/invitations/accept/${token}`, json(null, 'GET'))
    expect(shown).toMatchObject({ status: 200, body: { email: address, role: 'quality' } })
    expect(await accept(token, 'Nadia Quality')).toMatchObject({ status: 201, body: { email: address } })

    const { status: signedIn, cookie } = await signIn(host, address, PASSWORD)
    expect(signedIn).toBe(200)
    const me = await api<{ user: { role: string; displayName: string } }>('/api/auth/me', json(cookie, 'GET'))
    expect(me.body.user).toMatchObject({ role: 'quality', displayName: 'Nadia Quality' })
  })

  it('refuses the same link a second time (410 invitation_used) and an unknown link (404)', async () => {
    const { body } = await invite(email('twice'))
    const token = tokenOf(body.link)
    expect((await accept(token)).status).toBe(201)
    const again = await accept(token, 'Someone Else', 'another long password')
    expect(again).toMatchObject({ status: 410, body: { data: { code: 'invitation_used' } } })
    expect((await api(`/api/invitations/accept/${token}`, json(null, 'GET'))).body.data?.code).toBe('invitation_used')
    const unknown = await accept('A'.repeat(43))
    expect(unknown).toMatchObject({ status: 404, body: { data: { code: 'invitation_unknown' } } })
  })

  it('refuses an expired link (410 invitation_expired) and creates no account', async () => {
    // An invitation made 73 hours ago: its 72 hours have passed.
    const address = email('late')
    const token = randomBytes(32).toString('base64url')
    const adminId = await personId(demoEmail('admin'))
    await testDb()('invitations').insert({ token_hash: hashInvitationToken(token), email: address, role: 'technician', invited_by: adminId, created_at: testDb().raw(`now() - interval '73 hours'`), expires_at: testDb().raw(`now() - interval '1 hour'`) })
    expect(await accept(token)).toMatchObject({ status: 410, body: { data: { code: 'invitation_expired' } } })
    expect(await testDb()('users').where({ email: address }).first()).toBeUndefined()
  })

  it('withdraws the earlier link when the same address is invited again, and refuses an address that has an account', async () => {
    const address = email('again')
    const first = (await invite(address)).body
    const second = (await invite(address)).body
    expect((await accept(tokenOf(first.link))).body.data?.code).toBe('invitation_revoked')
    expect((await accept(tokenOf(second.link))).status).toBe(201)
    expect(await invite(address)).toMatchObject({ status: 409, body: { data: { code: 'email_taken' } } })
  })

  it('rejects a short password with 400 naming the field', async () => {
    const { body } = await invite(email('short'))
    const res = await api<{ data: { code: string; issues: { path: string }[] } }>(`/api/invitations/accept/${tokenOf(body.link)}`, json(null, 'POST', { displayName: 'Shorty', password: 'short' }))
    expect(res.status).toBe(400)
    expect(res.body.data.issues.map((i) => i.path)).toEqual(['password'])
  })
})

describe('roles and deactivation', () => {
  it('a new role takes effect at once, on the same session', async () => {
    const p = await person('technician')
    expect((await fetch('/api/masks', { headers: { cookie: p.cookie } })).status).toBe(403)
    const changed = await patch(admin, p.id, { role: 'engineer' })
    expect(changed).toMatchObject({ status: 200, body: { role: 'engineer', active: true } })
    expect((await fetch('/api/masks', { headers: { cookie: p.cookie } })).status).toBe(200)
  })

  it('a deactivated person is signed out at once and cannot sign in; history keeps their name; reactivation lets them back', async () => {
    const p = await person('support')
    const off = await patch(admin, p.id, { active: false })
    expect(off.body).toMatchObject({ active: false, deactivatedBy: 'Demo Admin' })
    expect(off.body.deactivatedAt).not.toBeNull()
    expect((await fetch('/api/auth/me', { headers: { cookie: p.cookie } })).status).toBe(401)
    expect((await signIn(host, p.email, PASSWORD)).status).toBe(401)
    // Never deleted: the row stays (the database refuses a delete).
    await expect(testDb()('users').where({ id: p.id }).del()).rejects.toThrow(/never deleted/)
    expect((await patch(admin, p.id, { active: true })).body).toMatchObject({ active: true, deactivatedAt: null })
    expect((await signIn(host, p.email, PASSWORD)).status).toBe(200)
  })

  it('never leaves the factory without an active admin', async () => {
    const db = testDb()
    // Make sure of the state: exactly one active admin, a fresh one, for this test.
    const a = await person('admin')
    const others = await db('users').where({ role: 'admin', active: true }).whereNot({ id: a.id }).select('id')
    await db('users').whereIn('id', others.map((o) => o.id)).update({ active: false })
    try {
      expect(await patch(a.cookie, a.id, { role: 'engineer' })).toMatchObject({ status: 409, body: { data: { code: 'last_admin' } } })
      expect(await patch(a.cookie, a.id, { active: false })).toMatchObject({ status: 409, body: { data: { code: 'last_admin' } } })
      expect((await db('users').where({ id: a.id }).first()).role).toBe('admin')
    } finally {
      await db('users').whereIn('id', others.map((o) => o.id)).update({ active: true })
    }
    // With another admin active again, stepping down is allowed.
    expect((await patch(a.cookie, a.id, { role: 'engineer' })).status).toBe(200)
  })

  it('answers 404 for an unknown person and 400 for an empty change', async () => {
    expect((await patch(admin, 987654321, { role: 'quality' })).body.data?.code).toBe('unknown_person')
    expect((await patch(admin, 1, {})).status).toBe(400)
  })

  it.each(ROLES.filter((r) => r !== 'admin'))('refuses a %s (403) on people and invitations', async (role) => {
    const { cookie } = await signIn(host, demoEmail(role), DEMO_PASSWORD)
    expect((await fetch('/api/people', { headers: { cookie } })).status).toBe(403)
    expect((await api('/api/invitations', json(cookie, 'POST', { email: email('x'), role: 'admin' }))).status).toBe(403)
    expect((await patch(cookie, 1, { role: 'admin' })).status).toBe(403)
  })
})
