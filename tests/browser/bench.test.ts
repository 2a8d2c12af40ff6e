import { mkdtempSync, rmSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { launchBrowser, signInAs } from '../support/browser'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, unique } from '../support/db'
import { startWorker, type RunningWorker } from '../support/worker'

const baseUrl = inject('baseUrl')
/** Set CONETRAIL_SHOTS=<dir> to keep screenshots of the bench for a look by eye. */
const shots = process.env.CONETRAIL_SHOTS
const VERDICT_TIMEOUT_MS = 30_000

let browser: Browser
let worker: RunningWorker
let page: Page
let dir: string
let judged: { id: number; code: string }
let unmasked: { id: number; code: string }
let station: { id: number }
const files: Record<'good' | 'inverted' | 'good2' | 'clipped', string> = { good: '', inverted: '', good2: '', clipped: '' }

beforeAll(async () => {
  worker = startWorker()
  browser = await launchBrowser()
  await worker.ready
  // Rated 6 Ω like the other recording tests (the generated driver has Re ≈ 5.9 Ω).
  judged = await makeProduct(unique('BP'), 6)
  unmasked = await makeProduct(unique('BN'), 6)
  station = await makeStation(undefined, unique('Bench'))
  // Generous limits: a healthy generated unit passes; polarity is still checked, and the response
  // has a wide band so the chart draws mask limits.
  await releaseTestMask(judged.id, {
    scalars: { fsHz: { low: 1, high: 1000 } },
    polarityNormal: true,
    ratedImpedanceRule: true,
    curves: { splDb: { freqHz: [20, 1000, 20000], low: [50, 60, 40], high: [105, 110, 105] } },
  })

  dir = mkdtempSync(join(tmpdir(), 'conetrail-bench-'))
  const write = (name: string, bytes: Buffer) => {
    const path = join(dir, name)
    writeFileSync(path, bytes)
    return path
  }
  files.good = write('unit-good.wav', generateRecording({ seed: 11 }))
  files.inverted = write('unit-inverted.wav', generateRecording({ seed: 12, defect: 'inverted_polarity' }))
  files.good2 = write('unit-good-2.wav', generateRecording({ seed: 13 }))
  files.clipped = write('unit-clipped.wav', generateRecording({ seed: 14, defect: 'clipped' }))

  page = await browser.newPage({ viewport: { width: 1366, height: 768 } })
  // Listening early turns on file-chooser interception before a key press opens one (a late
  // listener races a keyboard-opened chooser, which would then open natively and be lost).
  page.on('filechooser', () => {})
  await signInAs(page, baseUrl, 'technician', '/bench')
}, 300_000)

afterAll(async () => {
  await browser?.close()
  await worker?.stop()
  await closeTestDb()
  if (dir) rmSync(dir, { recursive: true, force: true })
})

const verdictWord = () => page.getByTestId('verdict-word').textContent({ timeout: 1000 }).catch(() => null)
// A string: this file is type-checked without the DOM library.
const activeTestId = () =>
  page.evaluate<string | null>('document.activeElement && (document.activeElement.getAttribute("data-testid") || document.activeElement.tagName)')
async function shot(name: string) {
  if (shots) await page.screenshot({ path: join(shots, `${name}.png`), fullPage: name.endsWith('-full') })
}

describe('the bench page', () => {
  it('takes a scanned serial and a chosen file to a PASS with its figures', async () => {
    // The scanner types into the serial field without anyone clicking it first.
    await expect.poll(activeTestId).toBe('bench-serial')
    await shot('bench-empty')
    await page.getByTestId('bench-station').selectOption(String(station.id))
    await page.getByTestId('bench-product').selectOption(judged.code)
    await page.getByTestId('bench-lot').fill('LOT-A1')
    // Room temperature: a word is refused beside the field; a decimal comma is read as a number.
    const ambient = page.getByTestId('bench-ambient')
    await ambient.fill('warm')
    expect(await ambient.locator('xpath=..').getByRole('alert').textContent()).toContain('must be a number of °C')
    await ambient.fill('23,5')
    expect(await ambient.locator('xpath=..').getByRole('alert').count()).toBe(0)
    expect(await page.evaluate(() => JSON.parse(localStorage.getItem('conetrail.bench.v1') ?? '{}').ambientC)).toBe(23.5)
    await ambient.fill('24')
    await page.getByTestId('bench-file').setInputFiles(files.good)
    await expect.poll(() => page.getByTestId('bench-file-name').textContent()).toBe('unit-good.wav')

    const serial = unique('SN')
    await page.getByTestId('bench-serial').fill(serial)
    await page.getByTestId('bench-serial').press('Enter')

    await expect.poll(verdictWord, { timeout: VERDICT_TIMEOUT_MS }).toBe('PASS')
    expect(await page.getByTestId('bench-verdict').textContent()).toContain(serial)
    // Fs of the generated driver is 43 Hz (fixtures/generator.ts DEMO_DRIVER).
    const fs = await page.getByTestId('figure-fsHz').textContent()
    const fsHz = Number(/([\d.]+)\s*Hz/.exec(fs ?? '')?.[1])
    expect(fsHz).toBeGreaterThan(35)
    expect(fsHz).toBeLessThan(52)
    // With the room temperature given, Re is referred to 20 °C (copper, IEC 60028): lower than at 24 °C.
    const re = Number(/([\d.]+)\s*Ω/.exec((await page.getByTestId('figure-reOhm').textContent()) ?? '')?.[1])
    const re20 = Number(/([\d.]+)\s*Ω/.exec((await page.getByTestId('figure-re20Ohm').textContent()) ?? '')?.[1])
    expect(re20).toBeGreaterThan(0)
    expect(re20).toBeLessThan(re)
    expect(await page.getByTestId('failed-checks').count()).toBe(0)
    expect(await page.locator('[data-testid=bench-checks] [data-check=polarity]').textContent()).toContain('normal')
    expect(await page.locator('[data-testid=bench-checks] [data-check=splDb]').textContent()).toContain('inside')
    // The three curves are drawn (uPlot canvases) once the result is in: the response with its
    // uncertainty (even a clean recording's reaches a few tenths of a dB at the bottom of the sweep,
    // where the unit is quiet), the impedance, and the THD with its noise floor.
    await expect.poll(() => page.locator('figure canvas').count()).toBeGreaterThanOrEqual(3)
    const captions = await page.locator('figure figcaption').allTextContents()
    expect(captions.some((c) => c.includes('Distortion (THD)') && c.includes('noise floor'))).toBe(true)
    expect(captions.some((c) => c.trim().startsWith('Response') && c.includes('uncertainty'))).toBe(true)

    // Ready for the next unit: serial cleared and focused, file cleared.
    await expect.poll(activeTestId).toBe('bench-serial')
    expect(await page.getByTestId('bench-serial').inputValue()).toBe('')
    expect(await page.getByTestId('bench-file-name').count()).toBe(0)
    expect(await page.getByTestId('bench-file').evaluate((el) => ('files' in el && el.files ? (el.files as { length: number }).length : 0))).toBe(0)

    // The station's table shows the unit, newest first, with its verdict in words.
    const first = page.getByTestId('recent-row').first()
    await expect.poll(() => first.textContent(), { timeout: 10_000 }).toContain(serial)
    expect(await first.textContent()).toContain('Pass')
    await shot('bench-pass')
    await shot('bench-pass-full')
  })

  it('runs by keyboard alone and names the polarity failure in plain words', async () => {
    await expect.poll(activeTestId).toBe('bench-serial')
    const serial = unique('SN')
    await page.keyboard.type(serial)
    await page.keyboard.press('Tab')
    expect(await activeTestId()).toBe('bench-choose')
    const [chooser] = await Promise.all([page.waitForEvent('filechooser'), page.keyboard.press('Enter')])
    await chooser.setFiles(files.inverted)
    await expect.poll(() => page.getByTestId('bench-file-name').textContent()).toBe('unit-inverted.wav')
    await page.keyboard.press('Tab')
    expect(await activeTestId()).toBe('bench-upload')
    await page.keyboard.press('Enter')

    await expect.poll(verdictWord, { timeout: VERDICT_TIMEOUT_MS }).toBe('FAIL')
    const failed = await page.getByTestId('failed-checks').textContent()
    expect(failed).toContain('Polarity')
    expect(failed).toContain('Inverted polarity')
    expect(await page.locator('[data-testid=bench-checks] [data-check=polarity]').textContent()).toContain('inverted')
    await expect.poll(activeTestId).toBe('bench-serial')
    expect(await page.getByTestId('bench-serial').inputValue()).toBe('')
    const first = page.getByTestId('recent-row').first()
    await expect.poll(() => first.textContent(), { timeout: 10_000 }).toContain(serial)
    expect(await first.textContent()).toContain('Fail')
    expect(await first.textContent()).toContain('Polarity')
    await shot('bench-fail')
  })

  it('shows a refused upload with its code and keeps the serial for a new recording', async () => {
    const serial = unique('SN')
    await page.getByTestId('bench-file').setInputFiles(files.clipped)
    await page.getByTestId('bench-serial').fill(serial)
    await page.getByTestId('bench-serial').press('Enter')
    const error = page.getByTestId('bench-error')
    await expect.poll(() => error.textContent().catch(() => null), { timeout: 10_000 }).toContain('clipped')
    expect(await error.textContent()).toContain(serial)
    expect(await page.getByTestId('bench-serial').inputValue()).toBe(serial)
    expect(await page.getByTestId('recent-row').first().textContent()).not.toContain(serial)
    await shot('bench-refused')
    await page.getByTestId('bench-serial').fill('')
    await page.getByTestId('bench-file').setInputFiles([])
    await expect.poll(() => page.getByTestId('bench-file-name').count()).toBe(0)
  })

  it('asks for the file instead of uploading a serial alone', async () => {
    await page.getByTestId('bench-serial').fill(unique('SN'))
    await page.getByTestId('bench-serial').press('Enter')
    await expect.poll(() => page.getByTestId('bench-hint').textContent()).toContain('Choose the recording file')
    expect(await activeTestId()).toBe('bench-choose')
    // A file dropped on the zone is taken as the recording.
    const dropped = await page.evaluateHandle('(() => { const d = new DataTransfer(); d.items.add(new File(["f 1"], "dropped-table.txt")); return d })()')
    await page.getByTestId('bench-dropzone').dispatchEvent('drop', { dataTransfer: dropped })
    await expect.poll(() => page.getByTestId('bench-file-name').textContent()).toBe('dropped-table.txt')
    expect(await page.getByTestId('bench-hint').textContent()).not.toContain('Choose the recording file')
    await page.getByTestId('bench-serial').fill('')
  })

  it('remembers station and product after a reload, shows NOT JUDGED without a mask, and reopens a row', async () => {
    await page.reload()
    await expect.poll(() => page.getByTestId('bench-station').inputValue()).toBe(String(station.id))
    expect(await page.getByTestId('bench-product').inputValue()).toBe(judged.code)
    await expect.poll(() => page.getByTestId('recent-row').count(), { timeout: 10_000 }).toBe(2)

    await page.getByTestId('bench-product').selectOption(unmasked.code)
    await page.getByTestId('bench-file').setInputFiles(files.good2)
    const serial = unique('SN')
    await page.getByTestId('bench-serial').fill(serial)
    // A slow line (about 150 kB/s up) so the progress bar is seen moving.
    const cdp = await page.context().newCDPSession(page)
    await cdp.send('Network.emulateNetworkConditions', { offline: false, latency: 20, downloadThroughput: -1, uploadThroughput: 150 * 1024 })
    await page.getByTestId('bench-upload').click()
    const bar = page.getByTestId('bench-progress')
    await expect.poll(() => bar.getAttribute('aria-valuenow').catch(() => null).then(Number), { interval: 50 }).toBeGreaterThan(0)
    expect(Number(await bar.getAttribute('aria-valuenow'))).toBeLessThan(100)
    await shot('bench-uploading')
    await cdp.send('Network.emulateNetworkConditions', { offline: false, latency: 0, downloadThroughput: -1, uploadThroughput: -1 })
    await expect.poll(verdictWord, { timeout: VERDICT_TIMEOUT_MS }).toBe('NOT JUDGED')
    expect(await page.getByTestId('bench-verdict').textContent()).toContain('No released mask')

    // Choosing an earlier row shows that unit's result again (the PASS at the bottom of three).
    await expect.poll(() => page.getByTestId('recent-row').count(), { timeout: 10_000 }).toBe(3)
    await page.getByTestId('recent-row').last().click()
    await expect.poll(verdictWord, { timeout: 10_000 }).toBe('PASS')
    if (shots) {
      await page.setViewportSize({ width: 820, height: 1180 })
      await shot('bench-tablet-full')
    }
  })
})
