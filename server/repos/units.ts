import type { Knex } from 'knex'

export interface UnitRow {
  id: string
  serial: string
  product_id: string
  lot_id: string | null
  created_at: Date
}

export class UnitInputError extends Error {
  constructor(
    readonly code: 'unknown_serial' | 'unknown_product' | 'lot_product_mismatch' | 'unit_product_mismatch',
    message: string,
  ) {
    super(message)
  }
}

export async function getUnitBySerial(db: Knex, serial: string): Promise<UnitRow | undefined> {
  return db<UnitRow>('units').where({ serial }).first()
}

export async function getUnitById(db: Knex, id: number): Promise<UnitRow | undefined> {
  return db<UnitRow>('units').where({ id: String(id) }).first()
}

export async function getLotCode(db: Knex, lotId: number): Promise<{ code: string } | null> {
  return (await db('lots').where({ id: lotId }).first('code')) ?? null
}

/** Of these serials, the ones that belong to a product other than this one. */
export async function serialsOfOtherProducts(db: Knex, serials: string[], productId: number): Promise<string[]> {
  return db('units').whereIn('serial', serials).whereNot({ product_id: productId }).pluck('serial')
}

/** The lot with this code, created under the product when absent. @throws UnitInputError when it belongs to another product. */
export async function findOrCreateLot(db: Knex, productId: number, code: string): Promise<number> {
  await db('lots').insert({ product_id: productId, code }).onConflict('code').ignore()
  const lot = await db('lots').where({ code }).first()
  if (Number(lot.product_id) !== productId) throw new UnitInputError('lot_product_mismatch', `Lot ${code} belongs to another product`)
  return Number(lot.id)
}

/**
 * The unit with this serial; created when a product is given (and its lot, when named).
 * @throws UnitInputError for an unknown serial without product, an unknown product code, or a product that contradicts the unit's.
 */
export async function resolveUnit(db: Knex, serial: string, productCode?: string, lotCode?: string): Promise<UnitRow> {
  const product = productCode ? await db('products').where({ code: productCode }).first() : undefined
  if (productCode && !product) throw new UnitInputError('unknown_product', `No product with code ${productCode}`)
  const existing = await getUnitBySerial(db, serial)
  if (existing) {
    if (product && Number(existing.product_id) !== Number(product.id)) {
      throw new UnitInputError('unit_product_mismatch', `Unit ${serial} is a ${(await db('products').where({ id: existing.product_id }).first()).code}, not a ${productCode}`)
    }
    if (lotCode && existing.lot_id === null) {
      const lotId = await findOrCreateLot(db, Number(existing.product_id), lotCode)
      return (await db<UnitRow>('units').where({ id: existing.id }).update({ lot_id: String(lotId) }).returning('*'))[0]!
    }
    return existing
  }
  if (!product) throw new UnitInputError('unknown_serial', `Unit ${serial} has never been tested here: name its product to register it`)
  const lotId = lotCode ? await findOrCreateLot(db, Number(product.id), lotCode) : null
  await db('units').insert({ serial, product_id: product.id, lot_id: lotId }).onConflict('serial').ignore()
  return (await getUnitBySerial(db, serial))!
}
