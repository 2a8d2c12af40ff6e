/**
 * On a phone (390 × 844) the key pages fit the screen's width: wide tables scroll inside their own
 * box, the page itself never scrolls sideways. Seeds 1155–1159 (the units browser range).
 */
import type { Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import type { ReturnCategoryView } from '../../shared/types/returns'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { signIn } from '../support/app'
import { signInAs, useBrowser } from '../support/browser'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const baseUrl = inject('baseUrl')
const browser = useBrowser()
const PHONE = { width: 390, height: 844 }
const lot = unique('PHLOT')
const serials = [unique('PH-A'), unique('PH-B')]
let worker: RunningWorker
let returnId: number

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  const product = await makeProduct(unique('P'), 6)
  const station = await makeStation(undefined, unique('PhoneSt'))
  await releaseTestMask(product.id, { scalars: { fsHz: { low: 20, high: 80 } }, polarityNormal: true, curves: {} })
  // One pass and one failure, so the lot page shows its failure table.
  const defects = [undefined, 'inverted_polarity'] as const
  for (const [i, serial] of serials.entries()) {
    const up = await postRecording(baseUrl, { token: station.token }, { serial, product: product.code, lot }, { bytes: generateRecording({ seed: 1155 + i, defect: defects[i] }), name: 'phone.wav' })
    expect(up.status).toBe(202)
    await waitFinished(baseUrl, { token: station.token }, up.body.id)
  }
  const support = (await signIn(baseUrl, demoEmail('support'), DEMO_PASSWORD)).cookie
  const cats = (await (await fetch(new URL('/api/return-categories', baseUrl), { headers: { cookie: support } })).json()) as ReturnCategoryView[]
  const created = await fetch(new URL('/api/returns', baseUrl), {
    method: 'POST',
    headers: { cookie: support, 'content-type': 'application/json' },
    body: JSON.stringify({ serial: serials[1], receivedOn: '2026-11-20', categoryId: cats[0]!.id, complaint: 'Buzzes at low volume' }),
  })
  expect(created.status).toBe(201)
  returnId = ((await created.json()) as { id: number }).id
}, 300_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

/** How wide the page is, once its content (tables, charts) is in place. */
async function pageWidth(page: Page, ready: string): Promise<number> {
  await page.getByTestId(ready).first().waitFor()
  await page.waitForLoadState('networkidle')
  return page.evaluate(() => document.documentElement.scrollWidth)
}

describe('pages on a phone', () => {
  it('people (admin) fits 390 px', async () => {
    const page = await browser().newPage({ viewport: PHONE })
    await signInAs(page, baseUrl, 'admin', '/people')
    expect(await pageWidth(page, 'people-table')).toBeLessThanOrEqual(PHONE.width)
    // The role control is on screen without scrolling the table (the e-mail moves under the name).
    const role = await page.getByTestId(`person-${demoEmail('admin')}`).getByRole('combobox').boundingBox()
    expect(role!.x + role!.width).toBeLessThanOrEqual(PHONE.width)
    await page.close()
  })

  it('a unit page and a lot page fit 390 px', async () => {
    const page = await browser().newPage({ viewport: PHONE })
    await signInAs(page, baseUrl, 'quality', `/units/${serials[1]}`)
    expect(await pageWidth(page, 'unit-parameters')).toBeLessThanOrEqual(PHONE.width)
    await page.goto(new URL(`/lots/${lot}`, baseUrl).toString())
    expect(await pageWidth(page, 'lot-pareto')).toBeLessThanOrEqual(PHONE.width)
    await page.close()
  })

  it('a return page fits 390 px', async () => {
    const page = await browser().newPage({ viewport: PHONE })
    await signInAs(page, baseUrl, 'support', `/returns/${returnId}`)
    await page.locator('main h1').first().waitFor()
    await page.waitForLoadState('networkidle')
    expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(PHONE.width)
    await page.close()
  })
})
