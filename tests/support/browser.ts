import { spawnSync } from 'node:child_process'
import { existsSync } from 'node:fs'
import { join } from 'node:path'
import { chromium, type Browser, type Page } from 'playwright-core'
import { afterAll, beforeAll } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { Role } from '../../shared/utils/roles'

const CHROMIUM = '/usr/bin/chromium'

/** Debian's chromium (playwright gives each launch a fresh temporary profile), installed with apt-get when absent (never a tool's own browser download). */
export function ensureChromium(): string {
  if (existsSync(CHROMIUM)) return CHROMIUM
  if (process.getuid?.() !== 0) throw new Error('Debian chromium is missing: sudo apt-get install -y chromium')
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
  for (const args of [['update'], ['install', '-y', '--no-install-recommends', 'chromium']]) {
    const r = spawnSync('apt-get', args, { stdio: 'inherit', env })
    if (r.status !== 0) throw new Error(`apt-get ${args.join(' ')} failed; install chromium by hand`)
  }
  return CHROMIUM
}

export async function launchBrowser(): Promise<Browser> {
  return chromium.launch({
    executablePath: ensureChromium(),
    headless: true,
    args: [
      '--headless',
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--no-first-run',
    ],
  })
}

/** One browser for a test file: launched before its tests, closed after. */
export function useBrowser(): () => Browser {
  let browser: Browser | undefined
  beforeAll(async () => {
    browser = await launchBrowser()
  }, 300_000)
  afterAll(async () => {
    await browser?.close()
  })
  return () => browser!
}

/** Signs a demo account in through the sign-in page and waits for the page it was sent to. */
export async function signInAs(page: Page, baseUrl: string, role: Role, path: string): Promise<void> {
  await page.goto(new URL(`/login?redirect=${encodeURIComponent(path)}`, baseUrl).toString())
  await page.fill('input[name=email]', demoEmail(role))
  await page.fill('input[name=password]', DEMO_PASSWORD)
  await page.click('button[type=submit]')
  await page.waitForURL((u) => u.pathname === path)
}

/**
 * Keys typed before hydration would be lost: wait until Vue has mounted the app. Polled from here
 * with page.evaluate (run through the DevTools protocol) rather than waitForFunction, whose
 * in-page polling evaluates code that the content security policy (no 'unsafe-eval') refuses.
 */
export async function hydrated(page: Page, timeoutMs = 30_000): Promise<void> {
  const until = Date.now() + timeoutMs
  const mounted = () => page.evaluate(() => Boolean((document.querySelector('#__nuxt') as { __vue_app__?: unknown } | null)?.__vue_app__))
  while (!(await mounted())) {
    if (Date.now() > until) throw new Error(`the page did not hydrate within ${timeoutMs} ms`)
    await page.waitForTimeout(50)
  }
}

/** Set CONETRAIL_SHOTS=<dir> to keep full-page screenshots of the pages a test visits, for a look by eye. */
export async function shot(page: Page, name: string): Promise<void> {
  const dir = process.env.CONETRAIL_SHOTS
  if (dir) await page.screenshot({ path: join(dir, `${name}.png`), fullPage: true })
}
