/**
 * Sign-out ends the session on the server, not only in the browser: a copy of the cookie taken
 * before it is refused afterwards (401 `unauthenticated`) on reads and on writes alike.
 */
import { fetch } from '@nuxt/test-utils/e2e'
import { afterAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, testDb, unique } from '../support/db'

const host = await useTestServer()
afterAll(closeTestDb)

/** A fresh account with the demo password (its hash copied from a demo account), so its sessions are this file's own. */
async function account(): Promise<{ id: number; email: string }> {
  const email = `${unique('so').toLowerCase()}@example.test`
  const { password_hash } = await testDb()('users').where({ email: demoEmail('technician') }).first('password_hash')
  const [row] = await testDb()('users').insert({ email, display_name: 'Sign-out Test', password_hash, role: 'technician' }).returning('id')
  return { id: Number(row.id), email }
}

const codeOf = async (res: Response) => ((await res.json()) as { data?: { code: string } }).data?.code
const me = (cookie: string) => fetch('/api/auth/me', { headers: { cookie } })
const addProduct = (cookie: string, code: string) =>
  fetch('/api/products', {
    method: 'POST',
    headers: { cookie, 'content-type': 'application/json' },
    body: JSON.stringify({ code, name: 'Sign-out check', ratedImpedanceOhm: 8, nominalSize: '6.5 in' }),
  })

describe('sign-out', () => {
  it('ends the session: the copied cookie answers 401 on a read and on a write, and nothing is written', async () => {
    const { cookie } = await signIn(host, demoEmail('engineer'), DEMO_PASSWORD)
    const copy = cookie
    expect((await me(copy)).status).toBe(200)
    expect(((await (await fetch('/api/_auth/session', { headers: { cookie: copy } })).json()) as { user?: { email: string } }).user?.email).toBe(demoEmail('engineer'))
    const before = unique('SO')
    expect((await addProduct(copy, before)).status).toBe(201)

    expect((await fetch('/api/auth/logout', { method: 'POST', headers: { cookie } })).status).toBe(200)

    const read = await me(copy)
    expect(read.status).toBe(401)
    expect(await codeOf(read)).toBe('unauthenticated')
    const list = await fetch('/api/products', { headers: { cookie: copy } })
    expect(list.status).toBe(401)
    const after = unique('SO')
    const write = await addProduct(copy, after)
    expect(write.status).toBe(401)
    expect(await codeOf(write)).toBe('unauthenticated')
    expect(await testDb()('products').where({ code: after }).first()).toBeUndefined()
    // nuxt-auth-utils' own session endpoint no longer names the person, only that the session ended.
    const session = await fetch('/api/_auth/session', { headers: { cookie: copy } })
    const text = await session.text()
    expect(text).not.toContain(demoEmail('engineer'))
    expect(JSON.parse(text)).toMatchObject({ ended: true })
    expect(JSON.parse(text).user).toBeUndefined()
  })

  it('ends only that session: the same person signed in elsewhere stays signed in', async () => {
    const here = await signIn(host, demoEmail('quality'), DEMO_PASSWORD)
    const there = await signIn(host, demoEmail('quality'), DEMO_PASSWORD)
    expect(here.cookie).not.toBe(there.cookie)
    expect((await fetch('/api/auth/logout', { method: 'POST', headers: { cookie: here.cookie } })).status).toBe(200)
    expect((await me(here.cookie)).status).toBe(401)
    expect((await me(there.cookie)).status).toBe(200)
  })

  it('records the end once: signing out again with the copy changes nothing and is not audited twice', async () => {
    const p = await account()
    const { cookie } = await signIn(host, p.email, DEMO_PASSWORD)
    const outs = async () => Number((await testDb()('audit_log').where({ action: 'auth.sign_out', subject: p.email }).count({ n: '*' }))[0]!.n)
    expect((await fetch('/api/auth/logout', { method: 'POST', headers: { cookie } })).status).toBe(200)
    expect((await fetch('/api/auth/logout', { method: 'POST', headers: { cookie } })).status).toBe(200)
    expect(await outs()).toBe(1)
    expect((await me(cookie)).status).toBe(401)
    const rows = await testDb()('user_sessions').where({ user_id: p.id })
    expect(rows.map((r) => [r.ended_reason, r.ended_at instanceof Date])).toEqual([['sign_out', true]])
  })
})

describe('other ends of a session', () => {
  it('a new sign-in in the same browser ends the session it replaces', async () => {
    const p = await account()
    const first = await signIn(host, p.email, DEMO_PASSWORD)
    const again = await fetch('/api/auth/login', {
      method: 'POST',
      headers: { cookie: first.cookie, 'content-type': 'application/json' },
      body: JSON.stringify({ email: p.email, password: DEMO_PASSWORD }),
    })
    expect(again.status).toBe(200)
    expect((await me(first.cookie)).status).toBe(401)
    const rows = await testDb()('user_sessions').where({ user_id: p.id }).orderBy('started_at')
    expect(rows.map((r) => r.ended_reason)).toEqual(['signed_in_again', null])
  })

  it('deactivation ends every open session of the person', async () => {
    const p = await account()
    const a = await signIn(host, p.email, DEMO_PASSWORD)
    const b = await signIn(host, p.email, DEMO_PASSWORD)
    const admin = (await signIn(host, demoEmail('admin'), DEMO_PASSWORD)).cookie
    const off = await fetch(`/api/people/${p.id}`, { method: 'PATCH', headers: { cookie: admin, 'content-type': 'application/json' }, body: JSON.stringify({ active: false }) })
    expect(off.status).toBe(200)
    expect((await me(a.cookie)).status).toBe(401)
    expect((await me(b.cookie)).status).toBe(401)
    expect((await testDb()('user_sessions').where({ user_id: p.id }).pluck('ended_reason')).sort()).toEqual(['deactivated', 'deactivated'])
  })
})

describe('the server keeps the lifetime too', () => {
  it('a session past its end (one shift after sign-in) is refused, whatever the cookie says', async () => {
    const p = await account()
    const { cookie } = await signIn(host, p.email, DEMO_PASSWORD)
    expect((await me(cookie)).status).toBe(200)
    const rows = await testDb()('user_sessions').where({ user_id: p.id })
    expect(rows).toHaveLength(1)
    expect(rows[0].ended_at).toBeNull()
    // Twelve hours (one shift, runtimeConfig.session.maxAge) from the sign-in.
    expect(Math.abs(rows[0].expires_at.getTime() - rows[0].started_at.getTime() - 12 * 3600_000)).toBeLessThan(5_000)
    await testDb()('user_sessions').where({ user_id: p.id }).update({ expires_at: new Date(Date.now() - 1000) })
    expect((await me(cookie)).status).toBe(401)
  })
})
