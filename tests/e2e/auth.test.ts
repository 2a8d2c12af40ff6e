import { $fetch, fetch } from '@nuxt/test-utils/e2e'
import { describe, expect, it } from 'vitest'
import { ROLES } from '../../shared/utils/roles'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { signIn, useTestServer } from '../support/app'

const host = await useTestServer()

describe('health', () => {
  it('reports the app version and a database that answers', async () => {
    const body = await $fetch<{ ok: boolean; version: string; database: { ok: boolean } }>('/api/health')
    const { version } = await import('../../package.json', { with: { type: 'json' } }).then((m) => m.default)
    expect(body.ok).toBe(true)
    expect(body.version).toBe(version)
    expect(body.database.ok).toBe(true)
  })
})

describe('sign-in', () => {
  it.each(ROLES)('works for the demo %s and /api/auth/me returns that role', async (role) => {
    const { status, cookie } = await signIn(host, demoEmail(role), DEMO_PASSWORD)
    expect(status).toBe(200)
    expect(cookie).toMatch(/=/)
    const me = await $fetch<{ user: { email: string; role: string } }>('/api/auth/me', { headers: { cookie } })
    expect(me.user).toMatchObject({ email: demoEmail(role), role })
  })

  it('answers 401 with one generic message for a wrong password and for an unknown e-mail', async () => {
    const answers = await Promise.all(
      [
        { email: demoEmail('engineer'), password: 'wrong password' },
        { email: 'nobody@demo.conetrail.test', password: DEMO_PASSWORD },
      ].map(async (body) => {
        const res = await fetch('/api/auth/login', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) })
        return { status: res.status, body: (await res.json()) as { message: string; data: { code: string } }, cookie: res.headers.get('set-cookie') }
      }),
    )
    for (const a of answers) {
      expect(a.status).toBe(401)
      expect(a.body.data.code).toBe('invalid_credentials')
      expect(a.cookie ?? '').not.toMatch(/nuxt-session=[^;]{20,}/)
    }
    expect(answers[0]!.body.message).toBe(answers[1]!.body.message)
  })

  it('rejects a malformed body with 400 and a code naming the field', async () => {
    const res = await fetch('/api/auth/login', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email: 'not-an-email' }) })
    expect(res.status).toBe(400)
    const body = (await res.json()) as { data: { code: string; issues: { path: string }[] } }
    expect(body.data.code).toBe('invalid_input')
    expect(body.data.issues.map((i) => i.path).sort()).toEqual(['email', 'password'])
  })

  it('signs out: the old cookie no longer reaches a protected route', async () => {
    const { cookie } = await signIn(host, demoEmail('quality'), DEMO_PASSWORD)
    const out = await fetch('/api/auth/logout', { method: 'POST', headers: { cookie } })
    expect(out.status).toBe(200)
    const cleared = out.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ')
    const me = await fetch('/api/auth/me', { headers: { cookie: cleared } })
    expect(me.status).toBe(401)
  })
})

describe('role guard on a protected route (GET /api/people, admin only)', () => {
  it('answers 401 without a session', async () => {
    const res = await fetch('/api/people')
    expect(res.status).toBe(401)
    expect(((await res.json()) as { data: { code: string } }).data.code).toBe('unauthenticated')
  })

  it.each(ROLES.filter((r) => r !== 'admin'))('answers 403 to a %s', async (role) => {
    const { cookie } = await signIn(host, demoEmail(role), DEMO_PASSWORD)
    const res = await fetch('/api/people', { headers: { cookie } })
    expect(res.status).toBe(403)
    expect(((await res.json()) as { data: { code: string } }).data.code).toBe('forbidden')
  })

  it('lists every account to an admin, without password hashes', async () => {
    const { cookie } = await signIn(host, demoEmail('admin'), DEMO_PASSWORD)
    const res = await fetch('/api/people', { headers: { cookie } })
    expect(res.status).toBe(200)
    const people = (await res.json()) as Record<string, unknown>[]
    // Other test files invite people too (and nobody is ever deleted): look for the demo accounts.
    const demo = people.filter((p) => String(p.email).endsWith('@demo.conetrail.test'))
    expect(demo.map((p) => p.role).sort()).toEqual([...ROLES].sort())
    expect(JSON.stringify(people)).not.toMatch(/password|scrypt/i)
  })
})
