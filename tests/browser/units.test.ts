/**
 * Support finds a unit from the search box in the header: a full serial typed as a
 * scanner types it opens the unit's record with its verdict and figures; a prefix opens the list;
 * an unknown serial says "never tested here" with the nearest serial. Seeds 1150–1159.
 */
import type { Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { hydrated, shot, signInAs, useBrowser } from '../support/browser'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const baseUrl = inject('baseUrl')
const browser = useBrowser()
const prefix = `${unique('UB')}-`
const serials = [`${prefix}0001`, `${prefix}0002`]
let worker: RunningWorker

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  // Rated 6 Ω: the generated driver has Re ≈ 5.9 Ω. The mask checks Fs and polarity.
  const product = await makeProduct(unique('P'), 6)
  const station = await makeStation(undefined, unique('UnitPageSt'))
  await releaseTestMask(product.id, { scalars: { fsHz: { low: 20, high: 80 } }, polarityNormal: true, curves: {} })
  for (const [i, serial] of serials.entries()) {
    const up = await postRecording(baseUrl, { token: station.token }, { serial, product: product.code, lot: unique('UBLOT') }, { bytes: generateRecording({ seed: 1150 + i }), name: 'unit.wav' })
    expect(up.status).toBe(202)
    expect((await waitFinished(baseUrl, { token: station.token }, up.body.id)).verdict).toBe('pass')
  }
  // The second unit came back: a later recording marked as a return test (test setup only).
  const ret = await postRecording(baseUrl, { token: station.token }, { serial: serials[1]! }, { bytes: generateRecording({ seed: 1152, defect: 'inverted_polarity' }), name: 'return.wav' })
  await testDb()('recordings').where({ id: ret.body.id }).update({ is_return_test: true, purpose: 'return_test' })
  expect((await waitFinished(baseUrl, { token: station.token }, ret.body.id)).verdict).toBe('fail')
}, 300_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})


/** Types into the header's search box the way a barcode scanner does: characters, then Enter. */
async function scan(page: Page, text: string) {
  const box = page.getByTestId('unit-search').locator('input')
  await box.click()
  await box.pressSequentially(text, { delay: 5 })
  await box.press('Enter')
}

describe('finding a unit from any page', () => {
  it('support scans a serial, lands on its record and sees the verdict and the figures', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'support', '/units')
    await hydrated(page)
    await scan(page, serials[0]!)
    await page.waitForURL((u) => u.pathname === `/units/${serials[0]}`)
    const verdict = page.getByTestId('unit-verdict')
    await verdict.waitFor()
    expect(await verdict.textContent()).toContain('PASS')
    const params = page.getByTestId('unit-parameters')
    await params.waitFor()
    // Ten figures; Fs measured and judged by the mask (its row carries the check's word, not colour only).
    expect(await params.locator('tbody tr').count()).toBe(10)
    const fs = params.locator('tr[data-figure=fsHz]')
    expect(Number(await fs.getByTestId('param-value').textContent())).toBeGreaterThan(20)
    expect(await fs.textContent()).toContain('Pass')
    expect(await page.getByTestId('unit-test').count()).toBe(1)
    expect(await page.getByTestId('test-mask').first().textContent()).toBe('v1')
    expect(await page.getByTestId('unit-certificate').locator('a[download]').getAttribute('href')).toBe(`/api/units/${serials[0]}/certificate.pdf`)
    // E-mailed from the page: the form says who it went to and empties itself for the next one.
    const send = page.getByTestId('certificate-send')
    // A mistyped address is named in words (no raw field path such as "to.1").
    await send.locator('input[name=certificate-to]').fill('buyer@example.test, not-an-address')
    await send.getByRole('button', { name: 'Send certificate' }).click()
    await expect.poll(() => page.getByTestId('unit-certificate').getByRole('alert').textContent()).toBe('Not sent: Not an e-mail address: not-an-address')
    await send.locator('input[name=certificate-to]').fill('buyer@example.test')
    await send.getByRole('button', { name: 'Send certificate' }).click()
    await expect.poll(() => page.getByTestId('unit-certificate').getByRole('status').textContent()).toContain('buyer@example.test')
    expect(await send.locator('input[name=certificate-to]').inputValue()).toBe('')
    await page.getByTestId('unit-curves').locator('canvas').first().waitFor()
    await shot(page, 'unit-record')
    // Printed, the record keeps its tests, figures and curves and drops the menus, search and forms.
    await page.emulateMedia({ media: 'print' })
    expect(await page.getByTestId('unit-search').isVisible()).toBe(false)
    expect(await page.getByTestId('main-nav').isVisible()).toBe(false)
    expect(await page.getByTestId('unit-certificate').isVisible()).toBe(false)
    expect(await params.isVisible()).toBe(true)
    expect(await page.getByTestId('unit-curves').isVisible()).toBe(true)
    await page.close()
  })

  it('a returned unit shows its return test marked, and the factory verdict unchanged', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'support', `/units/${serials[1]}`)
    const rows = page.getByTestId('unit-test')
    await rows.first().waitFor()
    expect(await rows.count()).toBe(2)
    expect(await rows.first().getAttribute('data-return-test')).toBe('true')
    expect(await rows.first().getByTestId('return-test-mark').textContent()).toBe('Return test')
    expect(await rows.nth(1).getByTestId('return-test-mark').count()).toBe(0)
    expect(await page.getByTestId('unit-verdict').textContent()).toContain('PASS')
    // The record opens on the production test; the return test's figures are one click away, marked.
    const heading = page.locator('#params-heading')
    expect(await heading.textContent()).toContain('test #1')
    await rows.first().getByRole('button', { name: 'Show' }).click()
    await expect.poll(() => heading.textContent()).toContain('test #2')
    expect(await heading.textContent()).toContain('Return test')
    expect(await page.locator('tr[data-figure=polarity] [data-testid=param-value]').textContent()).toBe('inverted')
    await page.locator('#unit-curves-heading', { hasText: 'test #2' }).waitFor()
    await shot(page, 'unit-returned')
    await page.close()
  })

  it('a prefix lists the units, newest first; an unknown serial offers the nearest', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'technician', '/bench')
    await hydrated(page)
    // The bench puts focus in its serial field once mounted; wait for that, so it cannot land after the click below.
    await expect.poll(() => page.evaluate(() => document.activeElement?.getAttribute('name'))).toBe('serial')
    // "/" jumps to the search box from anywhere outside a field.
    await page.locator('body').click({ position: { x: 5, y: 300 } })
    await page.keyboard.press('/')
    expect(await page.evaluate(() => document.activeElement?.getAttribute('name'))).toBe('unit-search')
    await scan(page, prefix.toLowerCase())
    await page.waitForURL((u) => u.pathname === '/units' && u.searchParams.get('q') === prefix.toLowerCase())
    const list = page.getByTestId('unit-list')
    await list.waitFor()
    expect(await list.getByTestId('unit-hit').evaluateAll((rows) => rows.map((r) => r.getAttribute('data-serial')))).toEqual([...serials].reverse())
    await shot(page, 'unit-list')

    const typo = `${serials[0]!.slice(0, -1)}9`
    await scan(page, typo)
    await page.waitForURL((u) => u.searchParams.get('q') === typo)
    const unknown = page.getByTestId('unit-unknown')
    await unknown.waitFor()
    expect(await unknown.textContent()).toContain('never tested here')
    expect(await unknown.getByTestId('unit-hit').first().getAttribute('data-serial')).toBe(serials[0])
    await shot(page, 'unit-unknown')
    // A technician may look units up but gets no certificate.
    await unknown.getByRole('link', { name: serials[0] }).click()
    await page.getByTestId('unit-summary').waitFor()
    expect(await page.getByTestId('unit-certificate').count()).toBe(0)
    await page.close()
  })

  it('a full page load of /units?q=<prefix> shows the list to a signed-in person', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'support', '/units')
    // Typed into the address bar: the server renders the page and must ask the API as this person.
    const response = await page.goto(new URL(`/units?q=${encodeURIComponent(prefix)}`, baseUrl).toString())
    expect(await response?.text()).not.toContain('Sign in first')
    const list = page.getByTestId('unit-list')
    await list.waitFor()
    expect(await list.getByTestId('unit-hit').count()).toBe(2)
    expect(await page.locator('main').textContent()).not.toContain('Sign in first')
    await page.close()
  })
})
