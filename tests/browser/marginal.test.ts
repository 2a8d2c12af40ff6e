/**
 * A check decided within its uncertainty of a limit is tagged "marginal" where checks are listed:
 * the bench's check table and the unit page's figures (curves, which have no figure row, in a line
 * under the table). The result is stored as the analysis stores one, so no worker is needed.
 */
import type { Browser, Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { DEFAULT_PROFILE } from '../../shared/utils/station-profile'
import { hydrated, launchBrowser, shot, signInAs } from '../support/browser'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, testDb, unique } from '../support/db'

const baseUrl = inject('baseUrl')
const serial = unique('MG')
let browser: Browser
let page: Page
let station: { id: number }

beforeAll(async () => {
  browser = await launchBrowser()
  const product = await makeProduct(unique('MP'), 6)
  station = await makeStation(DEFAULT_PROFILE, unique('Marginal bench'))
  const maskId = await releaseTestMask(product.id, { scalars: { re20Ohm: { low: 5.6, high: 6.2 }, fsHz: { low: 30, high: 60 } }, polarityNormal: true, curves: {}, decisionRule: 'simple' })
  const db = testDb()
  const [lot] = await db('lots').insert({ product_id: product.id, code: unique('MGLOT') }).returning('id')
  const [unit] = await db('units').insert({ serial, product_id: product.id, lot_id: lot.id }).returning('id')
  const at = new Date()
  const [rec] = await db('recordings')
    .insert({ unit_id: unit.id, station_id: station.id, kind: 'sweep', original_name: `${serial}.wav`, byte_size: 1, sha256: unique('sha'), storage_key: unique('key'), status: 'done', uploaded_at: at, finished_at: at })
    .returning('id')
  // Re 6.18 ± 0.05 Ω against a high limit of 6.2 Ω: inside, but within its uncertainty of the limit
  // (the simple rule passes it as measured and marks it); the response curve likewise; Fs well inside.
  const checks = [
    { name: 're20Ohm', value: 6.18, low: 5.6, high: 6.2, unit: 'Ω', pass: true, uncertainty: 0.05, marginal: true },
    { name: 'fsHz', value: 43, low: 30, high: 60, unit: 'Hz', pass: true },
    { name: 'splDb', value: -0.1, low: null, high: 0, unit: 'dB', pass: true, atHz: 2500, marginal: true },
  ]
  await db('results').insert({
    recording_id: rec.id, unit_id: unit.id, kind: 'sweep', mask_id: maskId, verdict: 'pass', judged_at: at,
    checks: JSON.stringify({ checks, unmeasured: [], undecided: [], warnings: [] }),
    fs_hz: 43, re20_ohm: 6.18, flags: JSON.stringify({ polarity: 'normal', openCoil: false, shortedCoil: false, rubBuzz: null }),
    parameters: JSON.stringify({ reOhm: 6.2, re20Ohm: 6.18, ambientC: 22, fsHz: 43, qms: null, qes: null, qts: null, leMh: null, zmaxOhm: null, zminOhm: 5.9, sensitivityDb: null, thdPct: null, thdMaxPct: null, rubBuzzDb: null }),
    curve_freq_hz: [], engine_version: 'test', timings_ms: '{}',
  })
  page = await browser.newPage({ viewport: { width: 1366, height: 900 } })
}, 300_000)

afterAll(async () => {
  await browser?.close()
  await closeTestDb()
})

describe('checks near a limit', () => {
  it('the bench tags the marginal checks and no other', async () => {
    await signInAs(page, baseUrl, 'technician', '/bench')
    await page.getByTestId('bench-station').selectOption(String(station.id))
    await page.getByRole('button', { name: `Show result of ${serial}` }).click()
    const table = page.getByTestId('bench-checks')
    await table.waitFor()
    const tag = table.locator('[data-check=re20Ohm]').getByTestId('check-marginal')
    expect(await tag.textContent()).toContain('marginal')
    expect(await tag.getAttribute('title')).toContain('measurement uncertainty of a limit')
    // Marginal is no outcome of its own: the check still passes.
    expect(await table.locator('[data-check=re20Ohm]').getAttribute('data-outcome')).toBe('pass')
    expect(await table.locator('[data-check=splDb]').getByTestId('check-marginal').count()).toBe(1)
    expect(await table.locator('[data-check=fsHz]').getByTestId('check-marginal').count()).toBe(0)
    await shot(page, 'bench-marginal')
  })

  it('the unit page tags the figure and names the curve under the table', async () => {
    await page.goto(new URL(`/units/${serial}`, baseUrl).toString())
    await hydrated(page)
    const params = page.getByTestId('unit-parameters')
    await params.waitFor()
    expect(await params.locator('tr[data-figure=re20Ohm]').getByTestId('check-marginal').count()).toBe(1)
    expect(await params.locator('tr[data-figure=fsHz]').getByTestId('check-marginal').count()).toBe(0)
    expect(await params.locator('tr[data-figure=re20Ohm]').textContent()).toContain('Pass')
    expect(await page.getByTestId('unit-marginal-curves').textContent()).toContain('Response')
    await shot(page, 'unit-marginal')
  })
})
