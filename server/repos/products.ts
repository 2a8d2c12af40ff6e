import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import type { ProductView } from '../../shared/types/api.ts'
import type { ProductListItem } from '../../shared/utils/product.ts'
import { coilSchema, expectedRe20Ohm, DEFAULT_RE_WARN_PCT, type Coil } from '../../shared/utils/coil.ts'
import { DEFAULT_RETEST_LIMIT } from '../../shared/utils/verdict.ts'
import { DEFAULT_FALSE_REJECT_MAX_PCT, limitFloorsSchema, type LimitFloors } from '../../shared/utils/mask.ts'
import type { Knex } from 'knex'
import { isUniqueViolation } from './pg-errors.ts'

export interface ProductRow {
  id: string
  code: string
  name: string
  rated_impedance_ohm: string
  nominal_size: string
  sens_band_low_hz: number
  sens_band_high_hz: number
  active_mask_id: string | null
  /** jsonb, shared/utils/coil.ts coilSchema (absent when a caller selected other columns only). */
  coil?: unknown
  re_warn_pct?: number
  retest_limit?: number
  /** jsonb, shared/utils/mask.ts limitFloorsSchema. */
  limit_floors?: unknown
  false_reject_max_pct?: number
}

/** A product as the API shows it (shared type). */
export type ProductSummary = ProductView

export const PRODUCT_CONFLICT_CODES = ['duplicate_product', 'product_in_use'] as const satisfies readonly ErrorCode[]
/** Why a product write was refused; `field` (in the answer's data) is the input it is about, for the form. */
export class ProductConflict extends DomainError<(typeof PRODUCT_CONFLICT_CODES)[number]> {
  constructor(code: (typeof PRODUCT_CONFLICT_CODES)[number], message: string, field: 'code' | 'ratedImpedanceOhm' = 'code') {
    super(code, message, { field })
  }
}

/** Expected Re is shown to 0.1 mΩ: finer digits would only be the float's noise. */
const RE_DECIMALS = 4

export function toProduct(r: ProductRow): ProductSummary {
  // A stored coil that no longer passes the schema is shown as absent rather than breaking the page.
  const parsed = r.coil == null ? null : coilSchema.safeParse(r.coil)
  const coil: Coil | null = parsed?.success ? parsed.data : null
  return {
    id: Number(r.id),
    code: r.code,
    name: r.name,
    ratedImpedanceOhm: Number(r.rated_impedance_ohm),
    nominalSize: r.nominal_size,
    sensitivityBandHz: [r.sens_band_low_hz, r.sens_band_high_hz],
    activeMaskId: r.active_mask_id === null ? null : Number(r.active_mask_id),
    coil,
    expectedRe20Ohm: coil ? Number(expectedRe20Ohm(coil).toFixed(RE_DECIMALS)) : null,
    reWarnPct: r.re_warn_pct ?? DEFAULT_RE_WARN_PCT,
    retestLimit: r.retest_limit ?? DEFAULT_RETEST_LIMIT,
    limitFloors: limitFloorsSchema.safeParse(r.limit_floors ?? {}).data ?? {},
    falseRejectMaxPct: r.false_reject_max_pct ?? DEFAULT_FALSE_REJECT_MAX_PCT,
  }
}

/** Products with the version of their active mask (one left join, never a query per product). */
function withMaskVersion(db: Knex) {
  return db<ProductRow & { active_mask_version: number | null }>('products')
    .leftJoin('masks', 'masks.id', 'products.active_mask_id')
    .select('products.*', 'masks.version as active_mask_version')
}

function toListItem(r: ProductRow & { active_mask_version: number | null }): ProductListItem {
  return { ...toProduct(r), activeMaskVersion: r.active_mask_version ?? null }
}

export async function listProducts(db: Knex): Promise<ProductListItem[]> {
  return (await withMaskVersion(db).orderBy('products.code')).map(toListItem)
}

export async function getProductByCode(db: Knex, code: string): Promise<ProductListItem | undefined> {
  const r = await withMaskVersion(db).where('products.code', code).first()
  return r && toListItem(r)
}

export async function getProductById(db: Knex, id: number): Promise<ProductListItem | undefined> {
  const r = await withMaskVersion(db).where('products.id', String(id)).first()
  return r && toListItem(r)
}

export interface NewProduct {
  code: string
  name: string
  ratedImpedanceOhm: number
  nominalSize?: string
  sensitivityBandHz?: [number, number]
  coil?: Coil | null
  reWarnPct?: number
  retestLimit?: number
  limitFloors?: LimitFloors
  falseRejectMaxPct?: number
}


/**
 * Adds a product and returns its id.
 * @throws ProductConflict `duplicate_product` when the code is taken.
 */
export async function createProduct(db: Knex, p: NewProduct): Promise<number> {
  try {
    const [row] = await db('products')
      .insert({
        code: p.code,
        name: p.name,
        rated_impedance_ohm: p.ratedImpedanceOhm,
        nominal_size: p.nominalSize ?? '',
        sens_band_low_hz: p.sensitivityBandHz?.[0] ?? 300,
        sens_band_high_hz: p.sensitivityBandHz?.[1] ?? 3000,
        coil: p.coil ? JSON.stringify(p.coil) : null,
        re_warn_pct: p.reWarnPct ?? DEFAULT_RE_WARN_PCT,
        retest_limit: p.retestLimit ?? DEFAULT_RETEST_LIMIT,
        limit_floors: JSON.stringify(p.limitFloors ?? {}),
        false_reject_max_pct: p.falseRejectMaxPct ?? DEFAULT_FALSE_REJECT_MAX_PCT,
      })
      .returning('id')
    return Number(row.id)
  } catch (err) {
    if (isUniqueViolation(err)) throw new ProductConflict('duplicate_product', `A product with the code ${p.code} exists`)
    throw err
  }
}

export type ProductChanges = Partial<NewProduct>

/**
 * Edits a product; undefined when no product has that code. The code and the rated impedance
 * identify what units were built and judged against, so they change only while no unit exists.
 * The product row is locked first: a unit inserted meanwhile waits on it (its foreign key check),
 * so the "no units" answer holds until the change is committed.
 * @throws ProductConflict `product_in_use` for a code or rated impedance change once units exist,
 *   `duplicate_product` for a new code that another product has.
 */
export async function updateProduct(db: Knex, code: string, changes: ProductChanges): Promise<ProductListItem | undefined> {
  return db.transaction(async (trx) => {
    const row = await trx<ProductRow>('products').where({ code }).forUpdate().first()
    if (!row) return undefined
    const newCode = changes.code !== undefined && changes.code !== row.code
    const newRated = changes.ratedImpedanceOhm !== undefined && changes.ratedImpedanceOhm !== Number(row.rated_impedance_ohm)
    if ((newCode || newRated) && (await trx('units').where({ product_id: row.id }).first('id'))) {
      const what = newCode ? 'code' : 'rated impedance'
      throw new ProductConflict('product_in_use', `Units of ${code} exist: its ${what} can no longer change (create a new product instead)`, newCode ? 'code' : 'ratedImpedanceOhm')
    }
    const update: Record<string, unknown> = {}
    if (changes.code !== undefined) update.code = changes.code
    if (changes.name !== undefined) update.name = changes.name
    if (changes.ratedImpedanceOhm !== undefined) update.rated_impedance_ohm = changes.ratedImpedanceOhm
    if (changes.nominalSize !== undefined) update.nominal_size = changes.nominalSize
    if (changes.sensitivityBandHz) [update.sens_band_low_hz, update.sens_band_high_hz] = changes.sensitivityBandHz
    if (changes.coil !== undefined) update.coil = changes.coil ? JSON.stringify(changes.coil) : null
    if (changes.reWarnPct !== undefined) update.re_warn_pct = changes.reWarnPct
    if (changes.retestLimit !== undefined) update.retest_limit = changes.retestLimit
    if (changes.limitFloors !== undefined) update.limit_floors = JSON.stringify(changes.limitFloors)
    if (changes.falseRejectMaxPct !== undefined) update.false_reject_max_pct = changes.falseRejectMaxPct
    try {
      await trx('products').where({ id: row.id }).update({ ...update, updated_at: trx.fn.now() })
    } catch (err) {
      if (isUniqueViolation(err)) throw new ProductConflict('duplicate_product', `A product with the code ${changes.code} exists`)
      throw err
    }
    const r = await withMaskVersion(trx).where('products.id', row.id).first()
    return r && toListItem(r)
  })
}
