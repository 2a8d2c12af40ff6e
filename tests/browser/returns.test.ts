/**
 * The returns desk in the browser (issue 7): support scans a returned unit's serial into the header
 * search box, registers the return from the unit's record, uploads a re-test recording, sees the
 * comparison with the factory test (delta table and trade-practice readings) and closes it with a
 * disposition. Seeds 1300–1309 (this file's part of the returns range 1200–1399).
 */
import { join } from 'node:path'
import type { Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { DEMO_DRIVER, generateRecording } from '../../fixtures/generator'
import { signInAs, useBrowser } from '../support/browser'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const baseUrl = inject('baseUrl')
/** Set CONETRAIL_SHOTS=<dir> to keep screenshots for a look by eye. */
const shots = process.env.CONETRAIL_SHOTS
const browser = useBrowser()
const serial = `${unique('RBR')}-0001`
let stationId: number
let worker: RunningWorker

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  // Rated 6 Ω: the generated driver has Re ≈ 5.9 Ω. The mask checks Fs and polarity.
  const product = await makeProduct(unique('P'), 6)
  const station = await makeStation(undefined, unique('ReturnsSt'))
  stationId = station.id
  await releaseTestMask(product.id, { scalars: { fsHz: { low: 20, high: 80 } }, polarityNormal: true, curves: {} })
  const up = await postRecording(baseUrl, { token: station.token }, { serial, product: product.code, lot: unique('RBLOT'), ambientC: 22 }, { bytes: generateRecording({ seed: 1300 }), name: 'factory.wav' })
  expect(up.status).toBe(202)
  expect((await waitFinished(baseUrl, { token: station.token }, up.body.id)).verdict).toBe('pass')
}, 300_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

/** Keys typed before hydration would be lost: wait until Vue has mounted the app. */
const hydrated = (page: Page) => page.waitForFunction('!!(document.querySelector("#__nuxt") && document.querySelector("#__nuxt").__vue_app__)')

async function shot(page: Page, name: string) {
  if (shots) await page.screenshot({ path: join(shots, `${name}.png`), fullPage: true })
}

describe('a return from the search box to its disposition', () => {
  it('support registers, re-tests, compares and closes a returned unit', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'support', '/returns')
    await hydrated(page)

    // 1. The serial from the label, typed into the header search box as a scanner does.
    const box = page.getByTestId('unit-search').locator('input')
    await box.click()
    await box.pressSequentially(serial, { delay: 5 })
    await box.press('Enter')
    await page.waitForURL((u) => u.pathname === `/units/${serial}`)
    const unitReturns = page.getByTestId('unit-returns')
    await unitReturns.waitFor()
    expect(await unitReturns.textContent()).toContain('never come back')

    // 2. Register the return from the unit's record: the serial comes along.
    await unitReturns.getByRole('link', { name: 'Register a return' }).click()
    await page.waitForURL((u) => u.pathname === '/returns')
    await hydrated(page)
    const form = page.getByTestId('return-register')
    expect(await form.locator('input[name=return-serial]').inputValue()).toBe(serial)
    await form.locator('input[name=return-customer-ref]').fill('RMA 5521')
    await form.locator('select[name=return-category]').selectOption({ label: 'Rattling' })
    await form.locator('textarea[name=return-complaint]').fill('Rattles on bass notes since the customer moved the cabinet.')
    await form.getByRole('button', { name: 'Register return' }).click()
    await page.waitForURL((u) => /^\/returns\/\d+$/.test(u.pathname))
    await hydrated(page)
    const details = page.getByTestId('return-details')
    await details.waitFor()
    expect(await details.textContent()).toContain('RMA 5521')
    expect(await page.getByTestId('return-status-open').count()).toBeGreaterThan(0)
    expect(await page.getByTestId('return-compare').textContent()).toContain('Upload a re-test')

    // 3. The re-test: a tired suspension (Fs −13 %, Qms −20 %), through the pipeline; its state shows until done.
    const retest = page.getByTestId('return-retest')
    const tired = { ...DEMO_DRIVER, fsHz: DEMO_DRIVER.fsHz * 0.87, qms: DEMO_DRIVER.qms * 0.8 }
    await retest.locator('input[name=return-retest-file]').setInputFiles({ name: 'return.wav', mimeType: 'audio/wav', buffer: generateRecording({ seed: 1301, driver: tired }) })
    await retest.locator('select[name=return-retest-station]').selectOption(String(stationId))
    await retest.locator('input[name=return-retest-ambient]').fill('22')
    await retest.getByRole('button', { name: 'Upload re-test' }).click()
    await retest.getByTestId('return-test-state-pass').waitFor({ timeout: 30_000 })

    // 4. The comparison: delta table with Fs and Qms beyond their usual spread, and the reading (trade practice).
    const table = page.getByTestId('return-delta-table')
    await table.waitFor({ timeout: 30_000 })
    expect(await table.locator('tbody tr').count()).toBe(8)
    const fsRow = table.getByTestId('delta-fsHz')
    expect(await fsRow.textContent()).toMatch(/-1\d\.\d %/)
    expect(await fsRow.textContent()).toContain('beyond usual spread')
    const readings = page.getByTestId('return-readings')
    expect(await readings.textContent()).toContain('Fs dropped a lot and Qms fell')
    expect(await page.getByTestId('return-compare').textContent()).toContain('trade practice')
    await page.getByTestId('return-curves').waitFor()
    await shot(page, 'return-compare')

    // 5. Closing needs a disposition; then it is closed, in words.
    const close = page.getByTestId('return-close')
    await close.getByRole('button', { name: 'Close return' }).click()
    const err = page.getByTestId('return-close-error')
    await err.waitFor()
    expect(await err.textContent()).toContain('needs a disposition')
    await close.getByLabel('Damaged in use').check()
    await close.locator('textarea[name=return-close-note]').fill('Cabinet dropped in transport by the customer.')
    await close.getByRole('button', { name: 'Close return' }).click()
    await page.getByTestId('return-closing').waitFor()
    expect(await page.getByTestId('return-status-closed').textContent()).toContain('Damaged in use')
    expect(await page.getByTestId('return-close').count()).toBe(0)
    await shot(page, 'return-closed')
    await page.close()
  }, 120_000)
})
