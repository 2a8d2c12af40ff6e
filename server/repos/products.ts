import type { ProductView } from '../../shared/types/api.ts'
import type { Knex } from 'knex'

export interface ProductRow {
  id: string
  code: string
  name: string
  rated_impedance_ohm: string
  nominal_size: string
  sens_band_low_hz: number
  sens_band_high_hz: number
  active_mask_id: string | null
}

/** A product as the API shows it (shared type). */
export type ProductSummary = ProductView

export function toProduct(r: ProductRow): ProductSummary {
  return {
    id: Number(r.id),
    code: r.code,
    name: r.name,
    ratedImpedanceOhm: Number(r.rated_impedance_ohm),
    nominalSize: r.nominal_size,
    sensitivityBandHz: [r.sens_band_low_hz, r.sens_band_high_hz],
    activeMaskId: r.active_mask_id === null ? null : Number(r.active_mask_id),
  }
}

export async function listProducts(db: Knex): Promise<ProductSummary[]> {
  return (await db<ProductRow>('products').orderBy('code')).map(toProduct)
}

export async function getProductByCode(db: Knex, code: string): Promise<ProductSummary | undefined> {
  const r = await db<ProductRow>('products').where({ code }).first()
  return r && toProduct(r)
}

export async function getProductById(db: Knex, id: number): Promise<ProductSummary | undefined> {
  const r = await db<ProductRow>('products').where({ id: String(id) }).first()
  return r && toProduct(r)
}

export interface NewProduct {
  code: string
  name: string
  ratedImpedanceOhm: number
  nominalSize?: string
  sensitivityBandHz?: [number, number]
}

export async function createProduct(db: Knex, p: NewProduct): Promise<number> {
  const [row] = await db('products')
    .insert({
      code: p.code,
      name: p.name,
      rated_impedance_ohm: p.ratedImpedanceOhm,
      nominal_size: p.nominalSize ?? '',
      sens_band_low_hz: p.sensitivityBandHz?.[0] ?? 300,
      sens_band_high_hz: p.sensitivityBandHz?.[1] ?? 3000,
    })
    .returning('id')
  return Number(row.id)
}
