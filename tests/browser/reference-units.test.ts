/**
 * The Reference units page in the browser: an engineer registers a unit through the form (a field
 * refused in words, too few measurements refused with how many more to take at the bench), sees its
 * accepted values and verification limits with their rule, and retires it with a reason after a
 * confirm step; a technician reads the list (retired units on request) and gets no form.
 * Seeds 2420–2429.
 */
import type { Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { ReferenceUnitView } from '../../shared/types/api'
import { figureText } from '../../shared/utils/units'
import { signIn } from '../support/app'
import { hydrated, shot, signInAs, useBrowser } from '../support/browser'
import { closeTestDb, makeProduct, makeStation, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const baseUrl = inject('baseUrl')
const browser = useBrowser()
const KEPT_AT = 'Drawer 2 under the line 4 bench'
const RETIRE_REASON = 'Dropped on the floor; surround torn'

let worker: RunningWorker
let eng: { cookie: string }
let product: { id: number; code: string }
let station: { id: number; token: string }
const stationName = unique('Ref bench')
const refSerial = unique('RFU')

async function api<T>(method: string, path: string): Promise<{ status: number; body: T }> {
  const res = await fetch(new URL(path, baseUrl), { method, headers: eng })
  return { status: res.status, body: (await res.json()) as T }
}

/** One recording of the reference serial through the station's token, analysed. */
async function measure(seed: number) {
  const up = await postRecording(baseUrl, { token: station.token }, { serial: refSerial, product: product.code, station: station.id }, { bytes: generateRecording({ seed }), name: `${seed}.wav` })
  expect(up.status).toBe(202)
  expect((await waitFinished(baseUrl, { token: station.token }, up.body.id)).status).toBe('done')
}

const squash = (t: string | null) => (t ?? '').replace(/\s+/g, ' ').trim()
// A string: this file is type-checked without the DOM library.
const activeTestId = (page: Page) => page.evaluate<string | null>('document.activeElement && document.activeElement.getAttribute("data-testid")')

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  eng = { cookie: (await signIn(baseUrl, demoEmail('engineer'), DEMO_PASSWORD)).cookie }
  product = await makeProduct(unique('RU'), 8)
  station = await makeStation(undefined, stationName)
  // Two measurements on the station: one short of the three the accepted values need.
  for (const seed of [2420, 2421]) await measure(seed)
}, 180_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

describe('the Reference units page for an engineer', () => {
  it('refuses by field and for too few measurements, registers with three, shows values and limits with their rule, retires with a reason', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await signInAs(page, baseUrl, 'engineer', '/bench')
    await hydrated(page)
    // Reachable from the navigation ("References": a label "Reference units" would also match other tests' link name "Units"), right after Stations.
    const nav = page.getByTestId('main-nav')
    await expect.poll(() => nav.getByRole('link', { name: 'References' }).count()).toBe(1)
    const labels = (await nav.getByRole('link').allTextContents()).map((t) => t.trim())
    expect(labels.indexOf('References')).toBe(labels.indexOf('Stations') + 1)
    await nav.getByRole('link', { name: 'References' }).click()
    await page.waitForURL((u) => u.pathname === '/reference-units')
    await hydrated(page)
    await expect.poll(() => page.title()).toBe('Reference units · Conetrail')
    // The default rule in plain words, once.
    const rule = squash(await page.getByTestId('reference-rule').textContent())
    expect(rule).toContain('must not fail on its own repeatability')
    expect(rule).toContain('a tenth of the product')

    await page.getByTestId('reference-register-open').click()
    const form = page.getByTestId('reference-form')
    await form.locator('input[name=serial]').fill(refSerial)
    await form.locator('input[name=kept-at]').fill(KEPT_AT)
    await form.locator('select[name=station]').selectOption(String(station.id))
    await form.locator('input[name=measurements]').fill('3')
    // No description: refused in words beside the field before anything is sent.
    await page.getByTestId('reference-register-submit').click()
    await expect.poll(() => form.textContent()).toContain('say what the unit is')
    expect(await api<ReferenceUnitView[]>('GET', `/api/reference-units?product=${product.code}&retired=1`).then((r) => r.body.length)).toBe(0)

    // Two measurements on the station: the server's words, and how many more to take there.
    await form.locator('input[name=description]').fill('Check unit B, green dot')
    await page.getByTestId('reference-register-submit').click()
    const error = page.getByTestId('reference-form-error')
    await expect.poll(() => error.textContent().catch(() => '')).toContain('has 2 finished sweep measurements')
    expect(squash(await error.textContent())).toContain(`Measure the unit 1 more time on ${stationName} at the bench`)
    expect(await form.textContent()).not.toContain('say what the unit is')
    await shot(page, 'reference-units-too-few')

    // A third measurement, and the engineer's own limit on Qts (the "Set limits yourself" section).
    await measure(2422)
    await form.locator('summary', { hasText: 'Set limits yourself' }).click()
    await form.locator('input[name=limit-qts-low]').fill('0.2')
    await form.locator('input[name=limit-qts-high]').fill('0.6')
    await page.getByTestId('reference-register-submit').click()
    const notice = page.getByTestId('reference-registered')
    await expect.poll(() => notice.textContent().catch(() => '')).toContain(`Registered ${refSerial}`)
    expect(await notice.textContent()).toContain('3 measurements')
    // The notice is brought into view and focused.
    await expect.poll(() => activeTestId(page)).toBe('reference-registered')
    expect(await notice.isVisible()).toBe(true)
    expect(await page.getByTestId('reference-form').count()).toBe(0)

    const [stored] = (await api<ReferenceUnitView[]>('GET', `/api/reference-units?product=${product.code}`)).body
    expect(stored).toMatchObject({ serial: refSerial, keptAt: KEPT_AT, stationId: station.id })
    const row = page.getByTestId(`reference-row-${refSerial}`)
    expect((await row.locator('td').allTextContents()).map(squash).slice(0, 5)).toEqual([refSerial, product.code, 'Check unit B, green dot', KEPT_AT, stationName])
    expect(await row.locator('td').first().getAttribute('class')).toContain('font-mono')

    // The new unit's figures are open: accepted value ± SD (n) and the limit with its rule, as stored.
    const detail = page.getByTestId(`reference-detail-${refSerial}`)
    const re = squash(await detail.getByTestId('reference-figure-re20Ohm').textContent())
    const reAccepted = stored!.accepted.re20Ohm!
    const reLimit = stored!.limits.re20Ohm!
    expect(re).toContain(`${figureText(reAccepted.value, 4)} ± ${figureText(reAccepted.sd, 2)} Ω (3)`)
    expect(re).toContain(`${figureText(reLimit.low, 4)} – ${figureText(reLimit.high, 4)} Ω`)
    // Common practice: the default limit is the wider of 3 × the unit's spread and a tenth of the tolerance.
    expect(re).toContain(reLimit.rule === 'repeatability' ? "3 × the unit's spread" : 'a tenth of the tolerance')
    expect(reLimit.low).toBeLessThan(reAccepted.value)
    expect(reLimit.high).toBeGreaterThan(reAccepted.value)
    const qts = squash(await detail.getByTestId('reference-figure-qts').textContent())
    expect(qts).toContain(`${figureText(0.2, 4)} – ${figureText(0.6, 4)}`)
    expect(qts).toContain('set by the engineer')
    // THD carries no default limit (a good unit reads the room's noise floor there).
    expect(squash(await detail.getByTestId('reference-figure-thdMaxPct').textContent())).toContain('no check on this figure')
    await shot(page, 'reference-units-registered')

    // Retire: a reason is required, then a confirm step.
    await page.getByTestId(`reference-retire-${refSerial}`).click()
    await page.getByTestId('reference-retire-submit').click()
    await expect.poll(() => detail.getByRole('alert').textContent().catch(() => '')).toContain('say why the unit is retired')
    await detail.locator('input[name=retire-comment]').fill(RETIRE_REASON)
    await page.getByTestId('reference-retire-submit').click()
    await expect.poll(() => page.getByTestId('reference-retire-submit').textContent()).toContain(`Yes, retire ${refSerial}`)
    expect((await api<ReferenceUnitView>('GET', `/api/reference-units/${stored!.id}`)).body.retiredAt).toBeNull()
    await page.getByTestId('reference-retire-submit').click()
    await expect.poll(() => row.getByTestId('reference-retired-tag').count()).toBe(1)
    expect(squash(await page.getByTestId(`reference-detail-${refSerial}`).getByTestId('reference-retired-reason').textContent())).toContain(RETIRE_REASON)
    expect(await page.getByTestId(`reference-retire-${refSerial}`).count()).toBe(0)
    const retired = (await api<ReferenceUnitView>('GET', `/api/reference-units/${stored!.id}`)).body
    expect(retired).toMatchObject({ retireComment: RETIRE_REASON })
    expect(retired.retiredAt).not.toBeNull()
    await shot(page, 'reference-units-retired')
    await page.close()
  })
})

describe('the Reference units page for a technician', () => {
  it('lists the unit (retired ones on request, by product) and offers no form', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await signInAs(page, baseUrl, 'technician', '/bench')
    await hydrated(page)
    await page.getByTestId('main-nav').getByRole('link', { name: 'References' }).click()
    await page.waitForURL((u) => u.pathname === '/reference-units')
    await hydrated(page)
    const row = page.getByTestId(`reference-row-${refSerial}`)
    await page.locator('select[name=product-filter]').selectOption(product.code)
    // Retired: not among the units in force.
    await expect.poll(() => page.getByTestId('reference-table').textContent()).toContain(`No reference units for ${product.code} in force.`)
    expect(await row.count()).toBe(0)
    await page.locator('input[name=show-retired]').check()
    await expect.poll(() => row.count()).toBe(1)
    expect(await row.getByTestId('reference-retired-tag').count()).toBe(1)
    await page.getByTestId(`reference-toggle-${refSerial}`).click()
    const detail = page.getByTestId(`reference-detail-${refSerial}`)
    expect(squash(await detail.getByTestId('reference-retired-reason').textContent())).toContain(RETIRE_REASON)
    expect(squash(await detail.getByTestId('reference-figure-qts').textContent())).toContain('set by the engineer')
    // Read only.
    expect(await page.getByTestId('reference-register-open').count()).toBe(0)
    expect(await page.getByTestId('reference-form').count()).toBe(0)
    expect(await page.getByTestId(`reference-retire-${refSerial}`).count()).toBe(0)
    await page.close()
  })
})
