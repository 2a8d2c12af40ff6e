import type { Knex } from 'knex'
import type { UnitView } from '../../shared/types/api.ts'
import { getProductById } from './products.ts'
import { listUnitRecordings } from './recordings.ts'
import { getUnitBySerial } from './units.ts'

/** A unit with its product, lot and every recording with its result, newest first. Its verdict is its latest result's. */
export async function getUnitView(db: Knex, serial: string): Promise<UnitView | undefined> {
  const unit = await getUnitBySerial(db, serial)
  if (!unit) return undefined
  const [product, lot, recordings] = await Promise.all([
    getProductById(db, Number(unit.product_id)),
    unit.lot_id ? db('lots').where({ id: unit.lot_id }).first('code') : Promise.resolve(null),
    listUnitRecordings(db, Number(unit.id)),
  ])
  const latest = recordings.find((r) => r.status === 'done' && !r.returnTest)
  return { serial: unit.serial, product: product!, lot: lot ?? null, verdict: latest?.verdict ?? null, recordings }
}
