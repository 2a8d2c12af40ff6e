/**
 * Open sessions and account changes: deactivation ends a person's sessions for good (a later
 * reactivation does not bring the old cookie back; signing in again does), a role change keeps
 * the session but applies the new role at once.
 */
import { fetch } from '@nuxt/test-utils/e2e'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { InvitationCreated } from '../../shared/types/people'
import type { MeResponse } from '../../shared/types/api'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, testDb, unique } from '../support/db'

const host = await useTestServer()
const PASSWORD = 'a long cut-off password'
let admin: string

beforeAll(async () => {
  admin = (await signIn(host, demoEmail('admin'), DEMO_PASSWORD)).cookie
})
afterAll(async () => {
  await closeTestDb()
})

const json = (cookie: string | null, method: string, body?: unknown): RequestInit => ({
  method,
  headers: { 'content-type': 'application/json', ...(cookie ? { cookie } : {}) },
  body: body === undefined ? undefined : JSON.stringify(body),
})
const me = (cookie: string) => fetch('/api/auth/me', { headers: { cookie } })
const patch = (id: number, body: unknown) => fetch(`/api/people/${id}`, json(admin, 'PATCH', body))

/** A fresh account through invite → accept, signed in. */
async function person(role: 'technician' | 'quality') {
  const email = `${unique('cut').toLowerCase()}@example.test`
  const invited = (await (await fetch('/api/invitations', json(admin, 'POST', { email, role }))).json()) as InvitationCreated
  const token = new URL(invited.link).pathname.split('/').at(-1)!
  expect((await fetch(`/api/invitations/accept/${token}`, json(null, 'POST', { displayName: 'Cut Off', password: PASSWORD }))).status).toBe(201)
  const { status, cookie } = await signIn(host, email, PASSWORD)
  expect(status).toBe(200)
  const id = Number((await testDb()('users').where({ email }).first('id')).id)
  return { id, email, cookie }
}

describe('deactivation ends open sessions for good', () => {
  it('deactivate → reactivate: the old cookie stays refused; a fresh sign-in works', async () => {
    const p = await person('technician')
    expect((await me(p.cookie)).status).toBe(200)

    expect((await patch(p.id, { active: false })).status).toBe(200)
    const row = await testDb()('users').where({ id: p.id }).first('sessions_valid_from')
    expect(row.sessions_valid_from).toBeInstanceOf(Date)
    expect((await me(p.cookie)).status).toBe(401)

    expect((await patch(p.id, { active: true })).status).toBe(200)
    const old = await me(p.cookie)
    expect(old.status).toBe(401)
    expect(((await old.json()) as { data: { code: string } }).data.code).toBe('unauthenticated')
    // Any route, not only /me.
    expect((await fetch('/api/units?q=ABC', { headers: { cookie: p.cookie } })).status).toBe(401)

    const again = await signIn(host, p.email, PASSWORD)
    expect(again.status).toBe(200)
    const fresh = await me(again.cookie)
    expect(fresh.status).toBe(200)
    expect(((await fresh.json()) as MeResponse).user.email).toBe(p.email)
  })

  it('a role change keeps the session and answers with the new role at once', async () => {
    const p = await person('quality')
    expect((await patch(p.id, { role: 'technician' })).status).toBe(200)
    const res = await me(p.cookie)
    expect(res.status).toBe(200)
    expect(((await res.json()) as MeResponse).user.role).toBe('technician')
    // Quality's pages are closed to the new role.
    expect((await fetch('/api/lots', { headers: { cookie: p.cookie } })).status).toBe(403)
  })
})
