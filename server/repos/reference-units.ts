import type { Knex } from 'knex'
import type { ReferenceUnitView } from '../../shared/types/api.ts'
import type { AcceptedValue, ReferenceFigures, VerificationLimit } from '../../shared/utils/reference-units.ts'

export interface NewReferenceUnit {
  unitId: number
  productId: number
  description: string
  keptAt: string
  stationId: number
  accepted: ReferenceFigures<AcceptedValue>
  limits: ReferenceFigures<VerificationLimit>
  basisRecordingIds: number[]
  createdBy: number | null
  /** Default: now (a demo dates it in the past). */
  createdAt?: Date
}

interface ReferenceRow {
  id: string
  serial: string
  product_code: string
  description: string
  kept_at: string
  station_id: string | null
  station_name: string | null
  accepted: ReferenceFigures<AcceptedValue>
  limits: ReferenceFigures<VerificationLimit>
  basis_recording_ids: string[]
  created_at: Date
  created_by_name: string | null
  retired_at: Date | null
  retire_comment: string | null
}

function referenceQuery(db: Knex) {
  return db('reference_units as ru')
    .join('units as u', 'u.id', 'ru.unit_id')
    .join('products as p', 'p.id', 'ru.product_id')
    .leftJoin('stations as s', 's.id', 'ru.station_id')
    .leftJoin('users as cu', 'cu.id', 'ru.created_by')
    .select('ru.*', 'u.serial', 'p.code as product_code', 's.name as station_name', 'cu.display_name as created_by_name')
}

function toView(r: ReferenceRow): ReferenceUnitView {
  return {
    id: Number(r.id),
    serial: r.serial,
    productCode: r.product_code,
    description: r.description,
    keptAt: r.kept_at,
    stationId: r.station_id === null ? null : Number(r.station_id),
    stationName: r.station_name,
    accepted: r.accepted,
    limits: r.limits,
    basisRecordingIds: r.basis_recording_ids.map(Number),
    createdAt: r.created_at.toISOString(),
    createdBy: r.created_by_name,
    retiredAt: r.retired_at ? r.retired_at.toISOString() : null,
    retireComment: r.retire_comment,
  }
}

/** Registers a reference unit. @throws the unique violation of `reference_units_one_active` when the unit already is one. */
export async function insertReferenceUnit(db: Knex, r: NewReferenceUnit): Promise<number> {
  const [row] = await db('reference_units')
    .insert({
      unit_id: r.unitId,
      product_id: r.productId,
      description: r.description,
      kept_at: r.keptAt,
      station_id: r.stationId,
      accepted: JSON.stringify(r.accepted),
      limits: JSON.stringify(r.limits),
      basis_recording_ids: r.basisRecordingIds,
      created_by: r.createdBy,
      ...(r.createdAt ? { created_at: r.createdAt } : {}),
    })
    .returning('id')
  return Number(row.id)
}

/** Reference units, newest first: those in force, and the retired ones when asked. */
export async function listReferenceUnits(db: Knex, filter: { productCode?: string; includeRetired?: boolean } = {}): Promise<ReferenceUnitView[]> {
  const q = referenceQuery(db).orderBy('ru.id', 'desc')
  if (filter.productCode) q.where('p.code', filter.productCode)
  if (!filter.includeRetired) q.whereNull('ru.retired_at')
  return ((await q) as ReferenceRow[]).map(toView)
}

export async function getReferenceUnit(db: Knex, id: number): Promise<ReferenceUnitView | undefined> {
  const r = (await referenceQuery(db).where('ru.id', id).first()) as ReferenceRow | undefined
  return r && toView(r)
}

/** The registration in force for a unit, if it is a reference unit. */
export async function getActiveReferenceOfUnit(db: Knex, unitId: number): Promise<{ id: number } | undefined> {
  const r = await db('reference_units').where({ unit_id: unitId }).whereNull('retired_at').first('id')
  return r && { id: Number(r.id) }
}

/** Retires a registration in force; false when there is none with this id. */
export async function retireReferenceUnit(db: Knex, id: number, by: number | null, comment: string): Promise<boolean> {
  const n = await db('reference_units').where({ id }).whereNull('retired_at').update({ retired_at: db.fn.now(), retired_by: by, retire_comment: comment })
  return n > 0
}
