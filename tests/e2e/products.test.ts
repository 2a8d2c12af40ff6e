import { fetch } from '@nuxt/test-utils/e2e'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { ApiErrorBody } from '../../shared/types/api'
import type { ProductListItem } from '../../shared/utils/product'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, testDb, unique } from '../support/db'

const host = await useTestServer()

let engineer: string
let technician: string

beforeAll(async () => {
  engineer = (await signIn(host, demoEmail('engineer'), DEMO_PASSWORD)).cookie
  technician = (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie
})
afterAll(closeTestDb)

async function call<T = ProductListItem>(method: string, path: string, cookie: string | null, body?: unknown): Promise<{ status: number; body: T & Partial<ApiErrorBody> }> {
  const headers: Record<string, string> = { 'content-type': 'application/json' }
  if (cookie) headers.cookie = cookie
  const res = await fetch(path, { method, headers, body: body === undefined ? undefined : JSON.stringify(body) })
  return { status: res.status, body: (await res.json()) as T & Partial<ApiErrorBody> }
}

// The typical 5.25-inch 8 Ω woofer coil of tests/unit/coil.test.ts: 4 layers of 31 AWG, 180 turns
// on a 26.6 mm mean diameter, 6.46 Ω at 20 °C (R = ρL/A: IEC 60028 copper, ASTM B258 0.0089 in).
const WOOFER_COIL = { awg: 31, turns: 180, meanDiameterMm: 26.6, layers: 4 }

const newProduct = (over: Record<string, unknown> = {}) => ({
  code: unique('W130'),
  name: 'Woofer 130 mm',
  ratedImpedanceOhm: 8,
  sensitivityBandHz: [300, 3000],
  coil: WOOFER_COIL,
  ...over,
})

/** A unit of the product, as the first upload creates it (what makes a product "in use"). */
async function addUnit(productId: number) {
  await testDb()('units').insert({ serial: unique('U'), product_id: productId })
}

describe('POST /api/products', () => {
  it('creates a product for an engineer: 201 with the expected Re from its coil', async () => {
    const input = newProduct({ nominalSize: '5.25 in' })
    const res = await call('POST', '/api/products', engineer, input)
    expect(res.status).toBe(201)
    expect(res.body).toMatchObject({
      code: input.code,
      name: 'Woofer 130 mm',
      ratedImpedanceOhm: 8,
      nominalSize: '5.25 in',
      sensitivityBandHz: [300, 3000],
      activeMaskId: null,
      activeMaskVersion: null,
      coil: { ...WOOFER_COIL, strands: 1 },
      reWarnPct: 10,
    })
    expect(res.body.expectedRe20Ohm).toBeCloseTo(6.46, 2)
    const row = await testDb()('products').where({ code: input.code }).first()
    expect(row.coil).toMatchObject(WOOFER_COIL)
  })

  it('creates a product without a coil (expected Re null) and with only the required fields', async () => {
    const code = unique('T25')
    const res = await call('POST', '/api/products', engineer, { code, name: 'Tweeter 25 mm', ratedImpedanceOhm: 6 })
    expect(res.status).toBe(201)
    expect(res.body).toMatchObject({ code, coil: null, expectedRe20Ohm: null, sensitivityBandHz: [300, 3000] })
  })

  it('answers 409 duplicate_product for a code that exists, and keeps the first', async () => {
    const input = newProduct()
    expect((await call('POST', '/api/products', engineer, input)).status).toBe(201)
    const again = await call('POST', '/api/products', engineer, { ...input, name: 'Another' })
    expect(again.status).toBe(409)
    expect(again.body.data!.code).toBe('duplicate_product')
    expect(await testDb()('products').where({ code: input.code }).select('name')).toEqual([{ name: 'Woofer 130 mm' }])
  })

  it('answers 400 invalid_input naming each bad field', async () => {
    const res = await call('POST', '/api/products', engineer, {
      code: 'has spaces',
      name: '',
      ratedImpedanceOhm: -8,
      sensitivityBandHz: [3000, 300],
      coil: { awg: 50, turns: 180, meanDiameterMm: 26.6, layers: 4 },
    })
    expect(res.status).toBe(400)
    expect(res.body.data!.code).toBe('invalid_input')
    expect(res.body.data!.issues!.map((i) => i.path).sort()).toEqual(['code', 'coil.awg', 'name', 'ratedImpedanceOhm', 'sensitivityBandHz'])
  })

  it('answers 400 for a coil given both ways', async () => {
    const res = await call('POST', '/api/products', engineer, newProduct({ coil: { ...WOOFER_COIL, lengthM: 15 } }))
    expect(res.status).toBe(400)
    expect(res.body.data!.issues!.map((i) => i.path)).toEqual(['coil.lengthM'])
  })

  it('refuses a technician (403) and a visitor (401), and creates nothing', async () => {
    const input = newProduct()
    expect((await call('POST', '/api/products', technician, input)).status).toBe(403)
    expect((await call('POST', '/api/products', null, input)).status).toBe(401)
    expect(await testDb()('products').where({ code: input.code }).first()).toBeUndefined()
  })
})

describe('GET /api/products and /api/products/:code', () => {
  it('lists products with their expected Re and active mask version', async () => {
    const input = newProduct()
    const created = (await call('POST', '/api/products', engineer, input)).body
    // A released mask made active, as the mask pages do on release.
    const [mask] = await testDb()('masks').insert({ product_id: created.id, version: 1, status: 'released', limits: {} }).returning('id')
    await testDb()('products').where({ id: created.id }).update({ active_mask_id: mask.id })
    const list = await call<ProductListItem[]>('GET', '/api/products', technician)
    expect(list.status).toBe(200)
    const item = list.body.find((p) => p.code === input.code)!
    expect(item).toMatchObject({ activeMaskId: Number(mask.id), activeMaskVersion: 1 })
    expect(item.expectedRe20Ohm).toBeCloseTo(6.46, 2)
  })

  it('answers one product by code to any signed-in role', async () => {
    const input = newProduct()
    await call('POST', '/api/products', engineer, input)
    const res = await call('GET', `/api/products/${input.code}`, technician)
    expect(res.status).toBe(200)
    expect(res.body).toMatchObject({ code: input.code, coil: { awg: 31 } })
    expect(res.body.expectedRe20Ohm).toBeCloseTo(6.46, 2)
    expect((await call('GET', `/api/products/${input.code}`, null)).status).toBe(401)
  })

  it('answers 404 product_not_found for a code nobody created', async () => {
    const res = await call('GET', `/api/products/${unique('NONE')}`, technician)
    expect(res.status).toBe(404)
    expect(res.body.data!.code).toBe('product_not_found')
  })
})

describe('PATCH /api/products/:code', () => {
  it('edits the name, band, coil and Re warning; coil null removes the description', async () => {
    const input = newProduct()
    await call('POST', '/api/products', engineer, input)
    const res = await call('PATCH', `/api/products/${input.code}`, engineer, {
      name: 'Woofer 130 mm, rev. B',
      sensitivityBandHz: [250, 2500],
      coil: { awg: 31, lengthM: 15, layers: 4, strands: 2 },
      reWarnPct: 5,
    })
    expect(res.status).toBe(200)
    expect(res.body).toMatchObject({ name: 'Woofer 130 mm, rev. B', sensitivityBandHz: [250, 2500], reWarnPct: 5, coil: { lengthM: 15, strands: 2 } })
    // 15 m × 0.4296 Ω/m / 2 strands = 3.22 Ω.
    expect(res.body.expectedRe20Ohm).toBeCloseTo(3.22, 2)
    const cleared = await call('PATCH', `/api/products/${input.code}`, engineer, { coil: null })
    expect(cleared.body).toMatchObject({ coil: null, expectedRe20Ohm: null, reWarnPct: 5 })
  })

  it('changes the code and rated impedance while no unit exists', async () => {
    const input = newProduct()
    await call('POST', '/api/products', engineer, input)
    const code = unique('W130B')
    const res = await call('PATCH', `/api/products/${input.code}`, engineer, { code, ratedImpedanceOhm: 4 })
    expect(res.status).toBe(200)
    expect(res.body).toMatchObject({ code, ratedImpedanceOhm: 4 })
    expect((await call('GET', `/api/products/${input.code}`, engineer)).status).toBe(404)
  })

  it('answers 409 product_in_use for a code or rated impedance change once units exist, and still edits the rest', async () => {
    const input = newProduct()
    const created = (await call('POST', '/api/products', engineer, input)).body
    await addUnit(created.id)
    const rated = await call('PATCH', `/api/products/${input.code}`, engineer, { ratedImpedanceOhm: 4 })
    expect(rated.status).toBe(409)
    expect(rated.body.data).toMatchObject({ code: 'product_in_use', field: 'ratedImpedanceOhm' })
    const renamed = await call('PATCH', `/api/products/${input.code}`, engineer, { code: unique('X') })
    expect(renamed.status).toBe(409)
    expect(renamed.body.data).toMatchObject({ code: 'product_in_use', field: 'code' })
    // The same values again are no change; the name may change.
    const same = await call('PATCH', `/api/products/${input.code}`, engineer, { code: input.code, ratedImpedanceOhm: 8, name: 'Renamed' })
    expect(same.status).toBe(200)
    expect(same.body).toMatchObject({ code: input.code, ratedImpedanceOhm: 8, name: 'Renamed' })
  })

  it('answers 409 duplicate_product for a code another product has', async () => {
    const a = newProduct()
    const b = newProduct()
    await call('POST', '/api/products', engineer, a)
    await call('POST', '/api/products', engineer, b)
    const res = await call('PATCH', `/api/products/${b.code}`, engineer, { code: a.code })
    expect(res.status).toBe(409)
    expect(res.body.data!.code).toBe('duplicate_product')
  })

  it.each([
    ['an empty body', {}, ''],
    ['a Re warning of 0 %', { reWarnPct: 0 }, 'reWarnPct'],
    ['an incomplete coil', { coil: { awg: 31, turns: 180, layers: 4 } }, 'coil.meanDiameterMm'],
  ])('answers 400 for %s', async (_label, body, path) => {
    const input = newProduct()
    await call('POST', '/api/products', engineer, input)
    const res = await call('PATCH', `/api/products/${input.code}`, engineer, body)
    expect(res.status).toBe(400)
    expect(res.body.data!.issues!.map((i) => i.path)).toEqual([path])
  })

  it('answers 404 for an unknown product and 403 for a technician', async () => {
    expect((await call('PATCH', `/api/products/${unique('NONE')}`, engineer, { name: 'x' })).status).toBe(404)
    const input = newProduct()
    await call('POST', '/api/products', engineer, input)
    expect((await call('PATCH', `/api/products/${input.code}`, technician, { name: 'x' })).status).toBe(403)
    expect((await call('GET', `/api/products/${input.code}`, engineer)).body.name).toBe('Woofer 130 mm')
  })
})
