import { describe, expect, it, inject } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { useBrowser } from '../support/browser'

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
    await page.waitForURL(/\/bench$/)

    const nav = page.getByTestId('main-nav')
    await expect.poll(() => nav.getByRole('link', { name: 'Bench' }).count()).toBe(1)
    expect(await nav.getByRole('link', { name: 'People' }).count()).toBe(0)
    expect(await nav.getByRole('link', { name: 'Masks' }).count()).toBe(0)
    expect(await page.getByTestId('user-name').textContent()).toContain('Demo')

    await page.goto(new URL('/people', baseUrl).toString())
    await page.waitForURL(/\/bench$/)
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
