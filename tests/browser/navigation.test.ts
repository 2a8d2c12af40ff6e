import { beforeAll, describe, expect, it, inject } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { InvitationCreated } from '../../shared/types/people'
import { signIn } from '../support/app'
import { signInAs, useBrowser } from '../support/browser'
import { unique } from '../support/db'

const baseUrl = inject('baseUrl')
const browser = useBrowser()

describe('a technician in the browser', () => {
  it('is sent to sign-in, signs in, sees the bench in the navigation but not people', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await page.goto(new URL('/lots', baseUrl).toString())
    await page.waitForURL((u) => u.pathname === '/login' && u.searchParams.get('redirect') === '/lots')

    await page.fill('input[name=email]', demoEmail('technician'))
    await page.fill('input[name=password]', DEMO_PASSWORD)
    await page.click('button[type=submit]')
    // /lots is not a technician's page: the middleware lands them on their own work.
    await page.waitForURL((u) => u.pathname === '/bench')

    const nav = page.getByTestId('main-nav')
    await expect.poll(() => nav.getByRole('link', { name: 'Bench' }).count()).toBe(1)
    expect(await nav.getByRole('link', { name: 'People' }).count()).toBe(0)
    expect(await nav.getByRole('link', { name: 'Masks' }).count()).toBe(0)
    expect(await page.getByTestId('user-name').textContent()).toContain('Demo')

    await page.goto(new URL('/people', baseUrl).toString())
    await page.waitForURL((u) => u.pathname === '/bench')
    // Sent to their own page with a word why, not silently.
    expect(await page.getByTestId('access-notice').textContent()).toContain('Your role (Test technician) cannot open People')
    await page.close()
  })

  it('shows a wrong password as a readable error and stays on sign-in', async () => {
    const page = await browser().newPage()
    await page.goto(new URL('/login', baseUrl).toString())
    await page.fill('input[name=email]', demoEmail('technician'))
    await page.fill('input[name=password]', 'not the password')
    await page.click('button[type=submit]')
    await expect.poll(() => page.getByTestId('login-error').textContent()).toContain('Wrong e-mail or password')
    expect(new URL(page.url()).pathname).toBe('/login')
    await page.close()
  })
})

describe('pages a role may not open', () => {
  it('a technician following a link to Returns lands on the bench with the reason; the next page drops it', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await signInAs(page, baseUrl, 'technician', '/units')
    // Typed or followed from outside the app: the server renders the refusal with its reason.
    await page.goto(new URL('/returns', baseUrl).toString())
    await page.waitForURL((u) => u.pathname === '/bench')
    const notice = page.getByTestId('access-notice')
    expect(await notice.textContent()).toContain('Your role (Test technician) cannot open Returns')
    expect(await notice.getAttribute('role')).toBe('alert')
    await page.getByTestId('main-nav').getByRole('link', { name: 'Units' }).click()
    await page.waitForURL((u) => u.pathname === '/units')
    await expect.poll(() => notice.count()).toBe(0)
    await page.close()
  })
})

describe('an open page follows changes to the account', () => {
  let admin: string
  const PASSWORD = 'a long browser password'
  const json = (cookie: string | null, method: string, body: unknown): RequestInit => ({
    method,
    headers: { 'content-type': 'application/json', ...(cookie ? { cookie } : {}) },
    body: JSON.stringify(body),
  })
  const call = (path: string, init: RequestInit) => fetch(new URL(path, baseUrl), init)

  beforeAll(async () => {
    admin = (await signIn(baseUrl, demoEmail('admin'), DEMO_PASSWORD)).cookie
  })

  it('a role change shows on the next page; after deactivation the next page is sign-in with the reason', async () => {
    const email = `${unique('navrole').toLowerCase()}@example.test`
    const invited = (await (await call('/api/invitations', json(admin, 'POST', { email, role: 'quality' }))).json()) as InvitationCreated
    const token = new URL(invited.link).pathname.split('/').at(-1)!
    expect((await call(`/api/invitations/accept/${token}`, json(null, 'POST', { displayName: 'Role Changer', password: PASSWORD }))).status).toBe(201)
    const people = (await (await call('/api/people', { headers: { cookie: admin } })).json()) as { id: number; email: string }[]
    const id = people.find((p) => p.email === email)!.id

    // One browser with two tabs: both hold the same session cookie.
    const context = await browser().newContext({ viewport: { width: 1366, height: 768 } })
    const page = await context.newPage()
    await page.goto(new URL('/login?redirect=/lots', baseUrl).toString())
    await page.fill('input[name=email]', email)
    await page.fill('input[name=password]', PASSWORD)
    await page.click('button[type=submit]')
    await page.waitForURL((u) => u.pathname === '/lots')
    const nav = page.getByTestId('main-nav')
    expect(await page.getByTestId('user-role').textContent()).toBe('Quality')

    expect((await call(`/api/people/${id}`, json(admin, 'PATCH', { role: 'support' }))).status).toBe(200)
    await nav.getByRole('link', { name: 'Units' }).click()
    await page.waitForURL((u) => u.pathname === '/units')
    await expect.poll(() => page.getByTestId('user-role').textContent()).toBe('Support')
    expect(await nav.getByRole('link', { name: 'Lots' }).count()).toBe(0)
    expect(await nav.getByRole('link', { name: 'Returns' }).count()).toBe(1)

    const other = await context.newPage()
    expect((await call(`/api/people/${id}`, json(admin, 'PATCH', { active: false }))).status).toBe(200)
    // A full load in another tab of the same browser (the server renders it): sign-in, not an error page.
    await other.goto(new URL('/returns', baseUrl).toString())
    await other.waitForURL((u) => u.pathname === '/login')
    expect(await other.getByTestId('login-ended').textContent()).toContain('Your session has ended')
    expect(await other.locator('body').textContent()).not.toContain('Something went wrong')
    await other.close()
    await nav.getByRole('link', { name: 'Returns' }).click()
    await page.waitForURL((u) => u.pathname === '/login')
    expect(await page.getByTestId('login-ended').textContent()).toContain('Your session has ended')
    // The sign-in page stays put (no bounce back into the app with a dead session).
    await page.reload()
    expect(new URL(page.url()).pathname).toBe('/login')
    expect(await page.locator('input[name=email]').count()).toBe(1)
    await context.close()
  })
})

describe('the header', () => {
  it('holds every admin page and the search box on one row at 1366 px; on a phone the menu scrolls in its own row', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await signInAs(page, baseUrl, 'admin', '/people')
    const links = page.getByTestId('main-nav').getByRole('link')
    await expect.poll(() => links.count()).toBe(10)
    const tops = await links.evaluateAll((as) => as.map((a) => Math.round(a.getBoundingClientRect().top)))
    expect(new Set(tops).size).toBe(1)
    const search = await page.getByTestId('unit-search').boundingBox()
    const nav = await page.getByTestId('main-nav').boundingBox()
    // Search box beside the menu, not below it; nothing hidden off the menu's edge.
    expect(Math.abs(search!.y + search!.height / 2 - (nav!.y + nav!.height / 2))).toBeLessThan(10)
    expect(await page.getByTestId('main-nav').evaluate((n) => n.scrollWidth <= n.clientWidth)).toBe(true)

    await page.setViewportSize({ width: 390, height: 844 })
    await expect.poll(() => page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390)
    const phoneTops = await links.evaluateAll((as) => as.map((a) => Math.round(a.getBoundingClientRect().top)))
    expect(new Set(phoneTops).size).toBe(1)
    await page.close()
  })
})
