import knex, { type Knex } from 'knex'
import { inject } from 'vitest'
import { DEFAULT_PROFILE, type StationProfile } from '../../server/analysis/index'
import { createProduct, getProductByCode } from '../../server/repos/products'
import { createStation } from '../../server/services/stations'
import { createMaskDraft, releaseMask } from '../../server/repos/masks'
import type { MaskLimitsInput } from '../../shared/utils/mask'

let db: Knex | undefined

/** A Knex connection to the e2e test database (the one the test server uses). */
export function testDb(): Knex {
  db ??= knex({ client: 'pg', connection: inject('databaseUrl'), pool: { min: 0, max: 4 } })
  return db
}

export async function closeTestDb() {
  await db?.destroy()
  db = undefined
}

let counter = 0
/** A name unique within this test run, e.g. for product codes and station names. */
export function unique(prefix: string): string {
  counter++
  return `${prefix}-${process.pid.toString(36)}${Date.now().toString(36).slice(-4)}${counter}`.toUpperCase()
}

export async function makeProduct(code = unique('P'), ratedImpedanceOhm = 8): Promise<{ id: number; code: string }> {
  const existing = await getProductByCode(testDb(), code)
  if (existing) return existing
  const id = await createProduct(testDb(), { code, name: `Test driver ${code}`, ratedImpedanceOhm, nominalSize: '6.5 in' })
  return { id, code }
}

export async function makeStation(profile: StationProfile = DEFAULT_PROFILE, name = unique('Station')): Promise<{ id: number; token: string }> {
  return createStation(testDb(), { name, line: 'Test line', profile, createdBy: null })
}

/** Releases a mask for a product (what an engineer does through the mask pages). */
export async function releaseTestMask(productId: number, limits: MaskLimitsInput): Promise<number> {
  const id = await createMaskDraft(testDb(), { productId, name: 'test mask', limits, createdBy: null })
  await releaseMask(testDb(), id, { by: null, comment: 'released by a test' })
  return id
}
