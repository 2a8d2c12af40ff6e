import { afterAll, describe, expect, inject, it } from 'vitest'
import { hydrated, shot, signInAs, useBrowser } from '../support/browser'
import { closeTestDb, testDb, unique } from '../support/db'

const baseUrl = inject('baseUrl')
const browser = useBrowser()
afterAll(closeTestDb)

describe('an engineer adds a product with its voice coil in the browser', () => {
  it('sees the expected Re while typing, creates the product and finds it in the list', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'engineer', '/products')

    const code = unique('W130')
    await page.getByRole('button', { name: 'Add a product' }).click()
    await page.fill('input[name=product-code]', code)
    await page.fill('input[name=product-name]', 'Woofer 130 mm')
    await page.fill('input[name=product-nominalSize]', '5.25 in')
    await page.fill('input[name=product-rated]', '8')
    await page.check('input[name=product-has-coil]')

    // The typical four-layer 31 AWG woofer coil of tests/unit/coil.test.ts: 180 turns on Ø 26.6 mm, 6.46 Ω.
    const live = page.getByTestId('coil-expected-re')
    await page.selectOption('select[name=coil-awg]', '31')
    await page.fill('input[name=coil-layers]', '4')
    await page.fill('input[name=coil-turns]', '180')
    await expect.poll(() => live.textContent()).toContain('—') // no diameter yet: no figure
    await page.fill('input[name=coil-mean-diameter]', '26.6')
    await expect.poll(() => live.textContent()).toContain('6.46 Ω')
    expect(await live.textContent()).toMatch(/81\s%/) // 6.46 Ω of 8 Ω rated
    await page.fill('input[name=coil-turns]', '90')
    await expect.poll(() => live.textContent()).toContain('3.23 Ω')
    await page.fill('input[name=coil-turns]', '180')

    await page.getByRole('button', { name: 'Create product' }).click()
    const row = page.getByTestId(`product-${code}`)
    await expect.poll(() => row.count()).toBe(1)
    expect(await row.getByTestId('product-expected-re').textContent()).toBe('6.46 Ω')
    expect(await row.textContent()).toContain('AWG 31')
    const stored = await testDb()('products').where({ code }).first()
    expect(stored.coil).toMatchObject({ awg: 31, turns: 180, meanDiameterMm: 26.6, layers: 4 })

    // Edit: 200 turns instead of 180 → 200 · π · 26.6 mm = 16.71 m × 0.4296 Ω/m = 7.18 Ω.
    await row.getByRole('button', { name: `Edit ${code}` }).click()
    await page.fill('input[name=coil-turns]', '200')
    await expect.poll(() => live.textContent()).toContain('7.18 Ω')
    await page.getByRole('button', { name: 'Save changes' }).click()
    await expect.poll(() => row.getByTestId('product-expected-re').textContent()).toBe('7.18 Ω')
    expect((await testDb()('products').where({ code }).first()).coil.turns).toBe(200)
    await page.close()
  })

  it('sets a limit floor and the false-reject threshold, keeps them over a reload, and clears them back to the defaults', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'engineer', '/products')
    const code = unique('FL')
    await page.getByRole('button', { name: 'Add a product' }).click()
    await page.fill('input[name=product-code]', code)
    await page.fill('input[name=product-name]', 'Midrange 100 mm')
    await page.fill('input[name=product-rated]', '8')
    // Every floor shows its default (DEFAULT_FLOORS, common practice) as the placeholder of an empty field.
    expect(await page.locator('input[name=floor-re20Ohm]').getAttribute('placeholder')).toBe('5')
    expect(await page.locator('input[name=floor-splDb]').getAttribute('placeholder')).toBe('1.5')
    expect(await page.locator('input[name=product-false-reject-max]').getAttribute('placeholder')).toBe('1')
    expect(await page.getByTestId('product-floors-fields').textContent()).toContain('Response curve')
    await page.getByRole('button', { name: 'Create product' }).click()
    const row = page.getByTestId(`product-${code}`)
    await expect.poll(() => row.count()).toBe(1)
    // Nothing filled in: the defaults, stored as no floors at all.
    expect(await row.getByTestId('product-floors').textContent()).toBe('defaults')
    let stored = await testDb()('products').where({ code }).first()
    expect(stored.limit_floors).toEqual({})
    expect(stored.false_reject_max_pct).toBe(1)

    await row.getByRole('button', { name: `Edit ${code}` }).click()
    await page.fill('input[name=floor-re20Ohm]', '8')
    await page.fill('input[name=product-false-reject-max]', '2')
    await shot(page, 'products-floors-form')
    await page.getByRole('button', { name: 'Save changes' }).click()
    await expect.poll(() => row.getByTestId('product-floors').textContent()).toBe('Re (20 °C) ±8 %')
    stored = await testDb()('products').where({ code }).first()
    expect(stored.limit_floors).toEqual({ re20Ohm: 8 })
    expect(stored.false_reject_max_pct).toBe(2)

    await page.reload()
    await hydrated(page)
    expect(await row.getByTestId('product-floors').textContent()).toBe('Re (20 °C) ±8 %')
    expect(await row.getByTestId('product-false-reject-max').textContent()).toContain('2 %')
    await row.getByRole('button', { name: `Edit ${code}` }).click()
    expect(await page.locator('input[name=floor-re20Ohm]').inputValue()).toBe('8')
    expect(await page.locator('input[name=floor-fsHz]').inputValue()).toBe('') // untouched: still the default
    expect(await page.locator('input[name=product-false-reject-max]').inputValue()).toBe('2')

    // Emptied fields go back to the defaults.
    await page.fill('input[name=floor-re20Ohm]', '')
    await page.fill('input[name=product-false-reject-max]', '')
    await page.getByRole('button', { name: 'Save changes' }).click()
    await expect.poll(() => row.getByTestId('product-floors').textContent()).toBe('defaults')
    stored = await testDb()('products').where({ code }).first()
    expect(stored.limit_floors).toEqual({})
    expect(stored.false_reject_max_pct).toBe(1)
    expect(await row.getByTestId('product-false-reject-max').textContent()).toContain('1 %')
    await page.close()
  })

  it('refuses a false-reject threshold outside 0.01–50 % beside its field and keeps the stored one', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'engineer', '/products')
    const code = unique('FX')
    await page.getByRole('button', { name: 'Add a product' }).click()
    await page.fill('input[name=product-code]', code)
    await page.fill('input[name=product-name]', 'Tweeter 25 mm')
    await page.fill('input[name=product-false-reject-max]', '60')
    await page.getByRole('button', { name: 'Create product' }).click()
    await expect.poll(() => page.getByRole('alert').textContent()).toContain('Check the highlighted fields')
    expect(await page.getByTestId('product-floors-fields').textContent()).toContain('the false-reject threshold is at most 50 %')
    expect(await testDb()('products').where({ code }).first()).toBeUndefined()
    await page.close()
  })

  it('shows the schema messages beside the fields and creates nothing for a bad form', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'engineer', '/products')
    const code = unique('BAD')
    await page.getByRole('button', { name: 'Add a product' }).click()
    await page.fill('input[name=product-code]', code)
    await page.check('input[name=product-has-coil]')
    await page.fill('input[name=coil-turns]', '180')
    await page.getByRole('button', { name: 'Create product' }).click()
    await expect.poll(() => page.getByRole('alert').textContent()).toContain('Check the highlighted fields')
    expect(await page.locator('main form').textContent()).toContain('name is required')
    expect(await page.locator('main form').textContent()).toContain('a mean diameter is needed with turns')
    expect(await testDb()('products').where({ code }).first()).toBeUndefined()
    await page.close()
  })
})
