/**
 * Sign-in rate limits (server/utils/rate-limit.ts): failures count per account and per address.
 * The test server trusts X-Forwarded-For (CONETRAIL_TRUST_PROXY=1 in the test setup), so each
 * check comes from an address of its own and never blocks the other test files.
 */
import { fetch } from '@nuxt/test-utils/e2e'
import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { SIGN_IN_LIMITS } from '../../server/utils/rate-limit'
import { useTestServer } from '../support/app'
import { testDb, unique } from '../support/db'

await useTestServer()
let octet = 0
const prefix = `10.${Math.floor(Math.random() * 200) + 20}.${Math.floor(Math.random() * 250)}`
const newAddress = () => `${prefix}.${++octet}`

async function login(email: string, password: string, address: string) {
  const res = await fetch('/api/auth/login', {
    method: 'POST',
    headers: { 'content-type': 'application/json', 'x-forwarded-for': address },
    body: JSON.stringify({ email, password }),
  })
  const body = (await res.json()) as { data?: { code: string; retryAfterS?: number } }
  return { status: res.status, code: body.data?.code, retryAfter: res.headers.get('retry-after') }
}

/** A real account with the demo password (its hash copied from a demo account). */
async function account(): Promise<string> {
  const email = `${unique('rl').toLowerCase()}@example.test`
  const { password_hash } = await testDb()('users').where({ email: demoEmail('technician') }).first('password_hash')
  await testDb()('users').insert({ email, display_name: 'Rate Limit Test', password_hash, role: 'technician' })
  return email
}

const { account: perAccount, address: perAddress } = SIGN_IN_LIMITS

describe('per account', () => {
  let email: string
  beforeAll(async () => {
    email = await account()
  })

  it(`answers 429 with Retry-After after ${perAccount.failures} failures, from any address, even with the right password`, async () => {
    const from = newAddress()
    for (let i = 0; i < perAccount.failures; i++) expect((await login(email, 'wrong password', from)).status).toBe(401)
    const blocked = await login(email, 'wrong password', from)
    expect(blocked).toMatchObject({ status: 429, code: 'sign_in_limited' })
    expect(Number(blocked.retryAfter)).toBeGreaterThan(perAccount.windowS - 60)
    expect(Number(blocked.retryAfter)).toBeLessThanOrEqual(perAccount.windowS)
    expect((await login(email, DEMO_PASSWORD, newAddress())).status).toBe(429)
  })

  it('counts unknown e-mails too (the answer must not tell which accounts exist)', async () => {
    const nobody = `${unique('nobody').toLowerCase()}@example.test`
    const from = newAddress()
    for (let i = 0; i < perAccount.failures; i++) expect((await login(nobody, 'guess', from)).status).toBe(401)
    expect((await login(nobody, 'guess', from)).status).toBe(429)
  })

  it('a successful sign-in clears the account count', async () => {
    const fresh = await account()
    const from = newAddress()
    for (let i = 0; i < perAccount.failures - 1; i++) expect((await login(fresh, 'wrong password', from)).status).toBe(401)
    expect((await login(fresh, DEMO_PASSWORD, from)).status).toBe(200)
    // Without the reset, the next failure would already block.
    for (let i = 0; i < perAccount.failures; i++) expect((await login(fresh, 'wrong password', from)).status).toBe(401)
    expect((await login(fresh, 'wrong password', from)).status).toBe(429)
  })
})

describe('per address', () => {
  it(`answers 429 after ${perAddress.failures} failures from one address (many accounts), while other addresses still sign in`, async () => {
    const from = newAddress()
    const tries = Array.from({ length: perAddress.failures }, () => `${unique('spray').toLowerCase()}@example.test`)
    // In batches: every failure is counted once, whatever the order.
    for (let i = 0; i < tries.length; i += 10) {
      const answers = await Promise.all(tries.slice(i, i + 10).map((e) => login(e, 'guess', from)))
      expect(answers.map((a) => a.status)).toEqual(answers.map(() => 401))
    }
    const real = await account()
    const blocked = await login(real, DEMO_PASSWORD, from)
    expect(blocked).toMatchObject({ status: 429, code: 'sign_in_limited' })
    expect(Number(blocked.retryAfter)).toBeGreaterThan(perAddress.windowS - 60)
    expect((await login(real, DEMO_PASSWORD, newAddress())).status).toBe(200)
  })
})

describe('attempts sent at once', () => {
  const tally = (answers: { status: number }[]) => answers.reduce<Record<number, number>>((t, a) => ({ ...t, [a.status]: (t[a.status] ?? 0) + 1 }), {})

  it(`check at most ${perAccount.failures} passwords of one account, however many arrive together`, async () => {
    const email = await account()
    const answers = await Promise.all(Array.from({ length: 50 }, () => login(email, 'wrong password', newAddress())))
    // Each try takes its place in the count before its password is checked: exactly the limit is checked.
    expect(tally(answers)).toEqual({ 401: perAccount.failures, 429: 50 - perAccount.failures })
    expect(answers.filter((a) => a.status === 429).every((a) => a.code === 'sign_in_limited')).toBe(true)
  })

  it(`check at most ${perAddress.failures} passwords from one address, however many arrive together`, async () => {
    const from = newAddress()
    const tries = Array.from({ length: 3 * perAddress.failures }, () => `${unique('burst').toLowerCase()}@example.test`)
    const answers = await Promise.all(tries.map((e) => login(e, 'guess', from)))
    expect(tally(answers)).toEqual({ 401: perAddress.failures, 429: 2 * perAddress.failures })
  })
})
