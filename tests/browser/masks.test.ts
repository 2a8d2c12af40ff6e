import { join } from 'node:path'
import type { Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import type { RecordingView } from '../../shared/types/api'
import { signInAs, useBrowser } from '../support/browser'
import { closeTestDb, makeProduct, makeStation, unique } from '../support/db'
import { getRecording, postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const baseUrl = inject('baseUrl')
const browser = useBrowser()
/** Set CONETRAIL_SHOTS=<dir> to keep screenshots of the mask pages for a look by eye. */
const shots = process.env.CONETRAIL_SHOTS
const GOLDEN_COUNT = 6

let worker: RunningWorker
let product: { id: number; code: string }
let station: { id: number; token: string }
let page: Page
const golden: RecordingView[] = []
/** What the page printed to its console (hydration mismatches show up here). */
const consoleLines: string[] = []

/** One healthy generated unit through the station API, analysed by the worker. */
async function uploadUnit(seed: number): Promise<RecordingView> {
  const auth = { token: station.token }
  const serial = unique('GU')
  const up = await postRecording(baseUrl, auth, { serial, product: product.code, station: station.id }, { bytes: generateRecording({ seed }), name: `${serial}.wav` })
  expect(up.status).toBe(202)
  return waitFinished(baseUrl, auth, up.body.id)
}

/** The mask's state badge on its page, e.g. "Released · active". */
const statusText = async () => ((await page.getByTestId('mask-status').first().textContent()) ?? '').replace(/\s+/g, ' ').trim()

async function shot(name: string, fullPage = false) {
  if (shots) await page.screenshot({ path: join(shots, `${name}.png`), fullPage })
}

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  // Rated 6 Ω: the generated driver has Re ≈ 5.9 Ω, so its impedance minimum passes the 80 % rule.
  product = await makeProduct(unique('P'), 6)
  station = await makeStation()
  for (let seed = 1; seed <= GOLDEN_COUNT; seed++) golden.push(await uploadUnit(700 + seed))
  page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
  page.on('console', (m) => consoleLines.push(m.text()))
  page.on('pageerror', (e) => consoleLines.push(e.message))
  await signInAs(page, baseUrl, 'engineer', '/masks')
}, 300_000)

afterAll(async () => {
  await page?.close()
  await worker?.stop()
  await closeTestDb()
})

describe('an engineer builds, previews and releases a mask', () => {
  let maskId = 0

  it('starts with no mask and unjudged units', async () => {
    expect(golden.map((g) => [g.status, g.verdict])).toEqual(Array(GOLDEN_COUNT).fill(['done', null]))
    const section = page.getByTestId(`mask-product-${product.code}`)
    await expect.poll(() => section.textContent()).toContain('No mask yet')
    await page.getByRole('link', { name: 'New mask', exact: true }).click()
    await page.waitForURL((u) => u.pathname === '/masks/new')
  })

  it('picks golden units from the candidates, sees their curves, and is told why more is better', async () => {
    await page.getByTestId('mask-product').selectOption(product.code)
    const rows = page.getByTestId('candidate-row')
    await expect.poll(() => rows.count()).toBe(GOLDEN_COUNT)
    // Four ticked in the table: too few, the form says so without calling the server.
    for (let i = 0; i < 4; i++) await rows.nth(i).getByRole('checkbox').check()
    await expect.poll(() => page.locator('figure canvas').count()).toBeGreaterThan(0)
    await expect.poll(() => page.locator('figure figcaption').textContent()).toContain('4 units')
    await page.getByTestId('mask-create').click()
    await expect.poll(() => page.getByTestId('mask-create-error').textContent()).toContain('at least 5')
    expect(page.url()).toContain('/masks/new')

    // The rest by serial, with one serial that is not a candidate.
    const serialsOnScreen = (await rows.locator('td.figure.font-semibold').allTextContents()).map((s) => s.trim())
    expect([...serialsOnScreen].sort()).toEqual(golden.map((g) => g.serial).sort())
    const rest = serialsOnScreen.slice(4)
    await page.getByTestId('mask-serials').fill(`${rest.join(', ')} NOT-A-UNIT-1`)
    await page.getByRole('button', { name: 'Tick' }).click()
    await expect.poll(() => page.getByTestId('mask-picked-count').textContent()).toContain(`${GOLDEN_COUNT} picked`)
    expect(await page.getByRole('alert').filter({ hasText: 'NOT-A-UNIT-1' }).count()).toBe(1)
    await expect.poll(() => page.locator('figure figcaption').textContent()).toContain(`${GOLDEN_COUNT} units`)
    // n = 6, k = 3: σ known to ±1/√10 ≈ 31.6 %; a t(5) prediction interval rejects about 4 % of good units.
    const advice = await page.getByTestId('golden-advice').textContent()
    expect(advice).toMatch(/With\s+6\s+units, σ is known to about ±31\.6 %/)
    expect(advice).toMatch(/about\s+3\.9 %\s+of good units/)
    await page.getByTestId('mask-name').fill('browser test limits')
    await page.evaluate('window.scrollTo(0, 0)')
    await shot('mask-new')
    await shot('mask-new-full', true)
    await page.getByTestId('mask-create').click()
    await page.waitForURL((u) => /^\/masks\/\d+$/.test(u.pathname), { timeout: 20_000 })
    maskId = Number(new URL(page.url()).pathname.split('/').pop())
    expect(maskId).toBeGreaterThan(0)
  })

  it('shows the proposed draft and redraws the chart as a breakpoint changes', async () => {
    await expect.poll(statusText).toBe('Draft')
    expect(await page.getByTestId('mask-history').textContent()).toMatch(/from\s+6\s+golden units/)
    const breakpoints = page.getByTestId('mask-curve-spl-breakpoints').getByTestId('breakpoint-row')
    expect(await breakpoints.count()).toBeGreaterThan(10)
    // Fs of the generated driver is 43 Hz (fixtures/generator.ts DEMO_DRIVER); the proposal brackets it.
    const fsLow = Number(await page.getByTestId('scalar-fsHz-low').inputValue())
    const fsHigh = Number(await page.getByTestId('scalar-fsHz-high').inputValue())
    expect(fsLow).toBeLessThan(43)
    expect(fsHigh).toBeGreaterThan(43)
    await shot('mask-draft')
    await shot('mask-draft-full', true)

    const canvas = page.getByTestId('mask-curve-spl').locator('canvas').first()
    await expect.poll(() => canvas.count()).toBe(1)
    const before = await canvas.screenshot()
    const firstHigh = breakpoints.first().locator('input').nth(2)
    const high = Number(await firstHigh.inputValue())
    await firstHigh.fill(String(high + 12))
    await expect.poll(async () => (await canvas.screenshot()).equals(before)).toBe(false)
    expect(await page.getByTestId('mask-savebar').textContent()).toContain('Unsaved changes')
    await page.getByRole('button', { name: 'Discard changes' }).click()
    expect(Number(await firstHigh.inputValue())).toBe(high)
    expect(await page.getByTestId('mask-savebar').textContent()).toContain('All changes saved')

    // A breakpoint added between the first two, then removed again.
    const n = await breakpoints.count()
    await breakpoints.first().getByRole('button', { name: /^Add a breakpoint/ }).click()
    expect(await breakpoints.count()).toBe(n + 1)
    await breakpoints.nth(1).getByRole('button', { name: /^Remove the breakpoint/ }).click()
    expect(await breakpoints.count()).toBe(n)
  })

  it('previews a tightened Fs limit on past results, then the proposal, before release', async () => {
    const fsLow = await page.getByTestId('scalar-fsHz-low').inputValue()
    const fsHigh = await page.getByTestId('scalar-fsHz-high').inputValue()
    // Fs high limit below every unit's Fs: all six would fail, and the preview says Fs is why.
    await page.getByTestId('scalar-fsHz-high').fill('30')
    await page.getByTestId('scalar-fsHz-low').fill('20')
    await page.getByTestId('mask-preview-run').click()
    const draftYield = page.getByTestId('preview-draft-yield')
    await expect.poll(() => draftYield.textContent().catch(() => ''), { timeout: 20_000 }).toContain('0.0 %')
    expect(await page.getByTestId('mask-savebar').textContent()).toContain('All changes saved')
    expect(await page.getByTestId('preview-active-yield').textContent()).toContain('None released')
    expect(await page.getByTestId('preview-changed-row').count()).toBe(GOLDEN_COUNT)
    expect(await page.getByTestId('preview-changed').textContent()).toContain('Fs')
    const fsRow = page.getByTestId('preview-by-check').locator('tr', { hasText: 'Fs' })
    expect((await fsRow.locator('td').allTextContents())[0]).toBe(String(GOLDEN_COUNT))
    await shot('mask-preview-tight')

    await page.getByTestId('scalar-fsHz-low').fill(fsLow)
    await page.getByTestId('scalar-fsHz-high').fill(fsHigh)
    await page.getByTestId('mask-preview-run').click()
    await expect.poll(() => draftYield.textContent().catch(() => ''), { timeout: 20_000 }).toContain('100.0 %')
    expect(await draftYield.textContent()).toMatch(/6\s+pass\s+·\s+0\s+fail/)
    await page.waitForTimeout(500) // the smooth scroll to the answer
    await shot('mask-preview-pass')
    const saved = (await (await page.request.get(new URL(`/api/masks/${maskId}`, baseUrl).toString())).json()) as { limits: { scalars: { fsHz: unknown } } }
    expect(saved.limits.scalars.fsHz).toEqual({ low: Number(fsLow), high: Number(fsHigh) })
  })

  it('releases only with a comment, judges the waiting results, and judges a new unit with this version', async () => {
    const button = page.getByTestId('mask-release-button')
    expect(await button.isDisabled()).toBe(true)
    await page.getByTestId('mask-release-comment').fill('ok')
    expect(await button.isDisabled()).toBe(true)
    const why = 'first limits from six golden units (browser test)'
    await page.getByTestId('mask-release-comment').fill(why)
    await button.click()
    await expect.poll(() => page.getByTestId('mask-notice').textContent().catch(() => ''), { timeout: 20_000 }).toContain(`${GOLDEN_COUNT} results`)
    await expect.poll(statusText).toBe('Released · active')
    // Read-only now: no inputs in the tables, no save bar.
    expect(await page.getByTestId('mask-savebar').count()).toBe(0)
    expect(await page.getByTestId('mask-scalars').locator('input[type=number]').count()).toBe(0)
    expect(await page.getByTestId('mask-history').textContent()).toContain(why)
    expect(await page.getByTestId('mask-retire-comment').inputValue()).toBe('')
    await shot('mask-released')

    const view = (await (await page.request.get(new URL(`/api/masks/${maskId}`, baseUrl).toString())).json()) as { version: number }
    const waiting = (await getRecording(baseUrl, { token: station.token }, golden[0]!.id)).body
    expect([waiting.verdict, waiting.maskVersion]).toEqual(['pass', view.version])

    const fresh = await uploadUnit(798)
    expect(fresh).toMatchObject({ status: 'done', verdict: 'pass', maskVersion: view.version })

    await page.getByRole('link', { name: '← All masks' }).click()
    await page.waitForURL((u) => u.pathname === '/masks')
    const row = page.getByTestId(`mask-product-${product.code}`).getByTestId('mask-row')
    await expect.poll(() => row.count()).toBe(1)
    const text = await row.textContent()
    expect(text).toContain(`v${view.version}`)
    expect(text).toContain('Released · active')
    expect(text).toContain(why)
    await shot('mask-list')
  })

  it('previews a second version against the released one: tightening Fs fails the line', async () => {
    await page.getByTestId(`mask-product-${product.code}`).getByRole('link', { name: /^New mask for/ }).click()
    await page.waitForURL((u) => u.pathname === '/masks/new' && u.searchParams.get('product') === product.code)
    expect(await page.getByTestId('mask-product').inputValue()).toBe(product.code)
    // The six golden units and the unit judged by v1 are all candidates now.
    await expect.poll(() => page.getByTestId('candidate-row').count()).toBe(GOLDEN_COUNT + 1)
    await page.getByRole('checkbox', { name: 'Pick every listed unit' }).check()
    await expect.poll(() => page.getByTestId('mask-picked-count').textContent()).toContain(`${GOLDEN_COUNT + 1} picked`)
    await page.getByTestId('mask-create').click()
    await page.waitForURL((u) => /^\/masks\/\d+$/.test(u.pathname) && !u.pathname.endsWith(`/${maskId}`), { timeout: 20_000 })
    await expect.poll(statusText).toBe('Draft')
    expect(await page.locator('h1').textContent()).toContain('mask v2')

    await page.getByTestId('scalar-fsHz-high').fill('30')
    await page.getByTestId('scalar-fsHz-low').fill('20')
    await page.getByTestId('mask-preview-run').click()
    await expect.poll(() => page.getByTestId('preview-draft-yield').textContent().catch(() => ''), { timeout: 20_000 }).toContain('0.0 %')
    const active = await page.getByTestId('preview-active-yield').textContent()
    expect(active).toContain('Active mask v1')
    expect(active).toContain('100.0 %')
    const changed = page.getByTestId('preview-changed-row')
    expect(await changed.count()).toBe(GOLDEN_COUNT + 1)
    expect((await changed.first().locator('td').allTextContents()).map((t) => t.trim())).toEqual(['Pass', 'Fail', 'Fs'])
    await page.waitForTimeout(500) // the smooth scroll to the answer
    await shot('mask-preview-v2')
  })

  it('renders each mask page on the server with its data (nothing to repair on hydration)', async () => {
    for (const path of [`/masks/${maskId}`, '/masks', `/masks/new?product=${product.code}`]) {
      const url = new URL(path, baseUrl).toString()
      const html = await (await page.request.get(url)).text()
      if (path.startsWith('/masks/') && !path.includes('new')) expect(html).toContain('data-testid="mask-history"')
      consoleLines.length = 0
      await page.goto(url)
      await page.waitForLoadState('networkidle')
      expect(consoleLines.filter((l) => /hydration/i.test(l))).toEqual([])
    }
  })

  it('retires the release, after which a new unit is not judged', async () => {
    await page.goto(new URL(`/masks/${maskId}`, baseUrl).toString())
    await page.getByRole('button', { name: /^Retire v\d+…$/ }).click()
    await page.getByTestId('mask-retire-button').click()
    await expect.poll(statusText, { timeout: 20_000 }).toBe('Retired')
    const unit = await uploadUnit(799)
    expect(unit).toMatchObject({ status: 'done', verdict: null, maskVersion: null })
  })
})
