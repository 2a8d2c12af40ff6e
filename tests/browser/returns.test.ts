/**
 * The returns desk in the browser: support scans a returned unit's serial into the header
 * search box, registers the return from the unit's record, uploads a re-test recording, sees the
 * comparison with the factory test (delta table and trade-practice readings) and closes it with a
 * disposition. Seeds 1300–1309 (this file's part of the returns range 1200–1399).
 */
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { DEMO_DRIVER, generateRecording } from '../../fixtures/generator'
import { hydrated, shot, signInAs, useBrowser } from '../support/browser'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const baseUrl = inject('baseUrl')
const browser = useBrowser()
const serial = `${unique('RBR')}-0001`
let stationId: number
let worker: RunningWorker
/** The return support registers below, which the engineer then reads. */
let returnPath = ''

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
    // A refusal stays only until the fields change.
    await form.locator('input[name=return-serial]').fill(unique('NOPE'))
    await form.locator('select[name=return-category]').selectOption({ label: 'Rattling' })
    await form.getByRole('button', { name: 'Register return' }).click()
    const refused = page.getByTestId('return-register-error')
    await refused.waitFor()
    expect(await refused.textContent()).toContain('never been tested here')
    // Typed as a person might: lower case with a trailing space; the search box would find it too.
    await form.locator('input[name=return-serial]').fill(`${serial.toLowerCase()} `)
    expect(await refused.count()).toBe(0)
    await form.locator('input[name=return-customer-ref]').fill('RMA 5521')
    await form.locator('select[name=return-category]').selectOption({ label: 'Rattling' })
    await form.locator('textarea[name=return-complaint]').fill('Rattles on bass notes since the customer moved the cabinet.')
    await form.getByRole('button', { name: 'Register return' }).click()
    await page.waitForURL((u) => /^\/returns\/\d+$/.test(u.pathname))
    returnPath = new URL(page.url()).pathname
    await hydrated(page)
    const details = page.getByTestId('return-details')
    await details.waitFor()
    expect(await details.textContent()).toContain('RMA 5521')
    expect(await page.getByTestId('return-status-open').count()).toBeGreaterThan(0)
    expect(await page.getByTestId('return-compare').textContent()).toContain('Upload a re-test')

    // 3. The re-test: a tired suspension (Fs −13 %, Qms −20 %), through the pipeline; its state shows until done.
    const retest = page.getByTestId('return-retest')
    const tired = { ...DEMO_DRIVER, fsHz: DEMO_DRIVER.fsHz * 0.87, qms: DEMO_DRIVER.qms * 0.8 }
    const retestFile = { name: 'return.wav', mimeType: 'audio/wav', buffer: generateRecording({ seed: 1301, driver: tired }) }
    // The station starts on the factory test's one (still active): a sweep needs it.
    expect(await retest.locator('select[name=return-retest-station]').inputValue()).toBe(String(stationId))
    await retest.locator('input[name=return-retest-file]').setInputFiles(retestFile)
    await retest.locator('input[name=return-retest-ambient]').fill('22')
    await retest.getByRole('button', { name: 'Upload re-test' }).click()
    await retest.getByTestId('return-test-state-pass').waitFor({ timeout: 30_000 })
    // The same file again: the server answers 200 duplicate, and the page says so.
    await retest.locator('input[name=return-retest-file]').setInputFiles(retestFile)
    await retest.getByRole('button', { name: 'Upload re-test' }).click()
    const dup = retest.getByTestId('return-retest-duplicate')
    await dup.waitFor()
    expect(await dup.textContent()).toMatch(/already uploaded for this return \(recording #\d+\)/)

    // 4. The comparison: delta table with Fs and Qms beyond their usual spread, and the reading (trade practice).
    const table = page.getByTestId('return-delta-table')
    await table.waitFor({ timeout: 30_000 })
    expect(await table.locator('tbody tr').count()).toBe(8)
    const fsRow = table.getByTestId('delta-fsHz')
    expect(await fsRow.textContent()).toMatch(/-1\d\.\d %/)
    expect(await fsRow.textContent()).toContain('beyond usual spread')
    // dB figures change in dB, THD in percentage points; no negative zero anywhere.
    const rubBuzz = await table.getByTestId('delta-rubBuzzDb').textContent()
    expect(rubBuzz).not.toContain('%')
    expect(rubBuzz).toMatch(/(\d dB|–)(▲|$)/)
    expect(await table.getByTestId('delta-sensitivityDb').textContent()).not.toContain('%')
    expect(await table.getByTestId('delta-thdMaxPct').textContent()).toMatch(/pp|–/)
    expect(await table.textContent()).not.toMatch(/-0\.0+(?!\d)/)
    const caption = await page.getByTestId('return-curves').locator('figcaption').first().textContent()
    expect(caption).toContain('dashed: factory test, solid: return test')
    const readings = page.getByTestId('return-readings')
    expect(await readings.textContent()).toContain('Fs dropped a lot and Qms fell')
    expect(await page.getByTestId('return-compare').textContent()).toContain('trade practice')
    await page.getByTestId('return-curves').waitFor()
    await shot(page, 'return-compare')

    // 5. Closing needs a disposition; it is final, so the form asks once more; then it is closed, in words.
    const close = page.getByTestId('return-close')
    await close.getByRole('button', { name: 'Close return' }).click()
    const err = page.getByTestId('return-close-error')
    await err.waitFor()
    expect(await err.textContent()).toContain('needs a disposition')
    await close.getByLabel('Damaged in use').check()
    await close.locator('textarea[name=return-close-note]').fill('Cabinet dropped in transport by the customer.')
    await close.getByRole('button', { name: 'Close return' }).click()
    const confirm = close.getByTestId('return-close-confirm')
    expect(await confirm.textContent()).toContain('Close this return as Damaged in use?')
    // "Keep open" sends nothing: the return stays open on the server.
    const statusOnServer = async () => ((await page.request.get(new URL(`/api${returnPath}`, baseUrl).toString()).then((r) => r.json())) as { status: string }).status
    await confirm.getByRole('button', { name: 'Keep open' }).click()
    await expect.poll(() => confirm.count()).toBe(0)
    expect(await statusOnServer()).toBe('open')
    expect(await page.getByTestId('return-status-open').count()).toBeGreaterThan(0)
    await close.getByRole('button', { name: 'Close return' }).click()
    expect(await statusOnServer()).toBe('open')
    await confirm.getByRole('button', { name: 'Yes, close return' }).click()
    await page.getByTestId('return-closing').waitFor()
    expect(await statusOnServer()).toBe('closed')
    expect(await page.getByTestId('return-status-closed').textContent()).toContain('Damaged in use')
    expect(await page.getByTestId('return-close').count()).toBe(0)
    // Closed: nothing to add, no re-test form or driving note, and the empty list said in words.
    expect(await page.getByTestId('return-attachments').textContent()).toContain('No photos or documents were attached')
    expect(await page.locator('input[name=return-attachment], input[name=return-retest-file]').count()).toBe(0)
    expect(await page.getByTestId('return-retest').textContent()).not.toContain('Drive the returned unit')
    await shot(page, 'return-closed')
    await page.close()
  }, 120_000)

  it('answers an address that is no return with a clean "No such return" page', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'support', '/returns/abc')
    await page.getByTestId('return-not-found').waitFor()
    expect(await page.title()).toContain('No such return')
    expect(await page.locator('h1').textContent()).toContain('No such return')
    expect(await page.locator('body').textContent()).not.toMatch(/NaN|Invalid input/)
    await page.close()
  })
})

describe('an engineer reads returns on a phone', () => {
  it('opens the returns pages read only, and sees the unit\'s returns on its record', async () => {
    expect(returnPath).toMatch(/^\/returns\/\d+$/)
    const page = await browser().newPage({ viewport: { width: 390, height: 844 } })
    await signInAs(page, baseUrl, 'engineer', '/returns')
    expect(new URL(page.url()).pathname).toBe('/returns')
    await page.getByTestId('return-read-only').waitFor()
    expect(await page.getByTestId('return-register').count()).toBe(0)
    await page.goto(new URL(returnPath, baseUrl).toString())
    await page.getByTestId('return-details').waitFor()
    expect(await page.getByTestId('return-read-only').textContent()).toContain('Read only for your role')
    expect(await page.locator('input[type=file], [data-testid=return-close]').count()).toBe(0)
    // The delta table fits the phone's width, its flags included.
    const table = page.getByTestId('return-delta-table')
    await table.waitFor()
    const box = await table.boundingBox()
    expect(box!.x + box!.width).toBeLessThanOrEqual(390)
    const flag = await table.getByTestId('delta-significant').first().boundingBox()
    expect(flag!.x + flag!.width).toBeLessThanOrEqual(390)
    await shot(page, 'phone-return-engineer')
    await page.goto(new URL(`/units/${serial}`, baseUrl).toString())
    const unitReturns = page.getByTestId('unit-returns')
    await unitReturns.waitFor()
    expect(await unitReturns.getByTestId('return-list').textContent()).toContain(serial)
    expect(await unitReturns.getByRole('link', { name: 'Register a return' }).count()).toBe(0)
    await page.close()
  }, 60_000)
})
