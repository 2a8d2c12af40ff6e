import type { Page } from 'playwright-core'
import { describe, expect, inject, it } from 'vitest'
import { signInAs, useBrowser } from '../support/browser'
import { unique } from '../support/db'

const baseUrl = inject('baseUrl')
const browser = useBrowser()

async function tokenWorks(token: string): Promise<number> {
  return (await fetch(new URL('/api/recordings?limit=1', baseUrl), { headers: { authorization: `Bearer ${token}` } })).status
}

/** Adds a station on the Stations page; the token notice is then open. */
async function addStation(page: Page, name: string, line = '7') {
  await page.getByRole('button', { name: 'Add a station' }).click()
  await page.fill('input[name=station-name]', name)
  await page.fill('input[name=station-line]', line)
  await page.getByRole('button', { name: 'Create station' }).click()
}

describe('an engineer sets up a station in the browser', () => {
  it('creates it, copies the token shown once, and replaces the token', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await signInAs(page, baseUrl, 'engineer', '/stations')

    const name = unique('Line 7 EOL')
    await addStation(page, name)

    const notice = page.getByTestId('station-token')
    await expect.poll(() => notice.textContent()).toContain(name)
    const first = (await notice.locator('p.font-mono').textContent())!.trim()
    expect(first).toMatch(/^ctst_/)
    expect(await tokenWorks(first)).toBe(200)
    await page.getByRole('button', { name: 'I have copied it' }).click()
    expect(await notice.count()).toBe(0)

    const card = page.locator('article', { hasText: name })
    await card.getByRole('button', { name: 'Issue a new token' }).click()
    await expect.poll(() => notice.count()).toBe(1)
    const second = (await notice.locator('p.font-mono').textContent())!.trim()
    expect(second).not.toBe(first)
    expect(await tokenWorks(second)).toBe(200)
    expect(await tokenWorks(first)).toBe(401)
    await page.close()
  })

  it('keeps a refused calibration edit open with the field named in words, then saves the corrected one', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await signInAs(page, baseUrl, 'engineer', '/stations')
    const name = unique('Line 8 EOL')
    await addStation(page, name, '8')
    await page.getByRole('button', { name: 'I have copied it' }).click()

    const card = page.locator('article', { hasText: name })
    await card.getByRole('button', { name: 'Edit calibration' }).click()
    const level = card.getByLabel('Drive level')
    await level.fill('-3')
    await card.getByRole('button', { name: 'Save as profile v2' }).click()
    await expect.poll(() => page.getByRole('alert').textContent()).toBe('Drive level (levelVrms) must be above 0 V RMS')
    // Still open, still holding what was typed.
    expect(await level.inputValue()).toBe('-3')

    await level.fill('2.5')
    await card.getByRole('button', { name: 'Save as profile v2' }).click()
    await expect.poll(() => card.getByRole('button', { name: 'Edit calibration' }).count()).toBe(1)
    await expect.poll(() => card.textContent()).toContain('profile v2')
    expect(await page.getByRole('alert').count()).toBe(0)
    await page.close()
  })
})
