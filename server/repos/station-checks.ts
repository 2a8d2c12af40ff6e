import type { Knex } from 'knex'
import type { CheckPlan, StationStateInput } from '../../shared/utils/station-checks.ts'
import type { CheckedFigure, ReferenceFigures, VerificationLimit } from '../../shared/utils/reference-units.ts'
import type { StationCheckView } from '../../shared/types/api.ts'

interface PlanRow {
  shift_starts: string[]
  time_zone: string
  every_hours: number | null
  every_units: number | null
  updated_at: Date
}

/** A station's check plan, with since when it holds; null when it has none. */
export async function getCheckPlan(db: Knex, stationId: number): Promise<(CheckPlan & { since: Date }) | null> {
  const r = (await db('station_check_plans').where({ station_id: stationId }).first()) as PlanRow | undefined
  return r ? { shiftStarts: r.shift_starts, timeZone: r.time_zone, everyHours: r.every_hours, everyUnits: r.every_units, since: r.updated_at } : null
}

/** Sets (or, with null, removes) a station's check plan. */
export async function writeCheckPlan(db: Knex, stationId: number, plan: CheckPlan | null, by: number | null): Promise<void> {
  if (!plan) {
    await db('station_check_plans').where({ station_id: stationId }).del()
    return
  }
  const row = { shift_starts: JSON.stringify(plan.shiftStarts), time_zone: plan.timeZone, every_hours: plan.everyHours, every_units: plan.everyUnits, updated_by: by, updated_at: db.fn.now() }
  await db('station_check_plans').insert({ station_id: stationId, ...row }).onConflict('station_id').merge()
}

export interface NewStationCheck {
  stationId: number
  referenceUnitId: number
  recordingId: number
  pass: boolean
  figures: ReferenceFigures<CheckedFigure>
  /** When the reference unit was measured. */
  checkedAt: Date
}

/** Stores a station check once per recording (a save repeated after a crash keeps the first). */
export async function insertStationCheck(db: Knex, c: NewStationCheck): Promise<void> {
  await db('station_checks')
    .insert({ station_id: c.stationId, reference_unit_id: c.referenceUnitId, recording_id: c.recordingId, pass: c.pass, figures: JSON.stringify(c.figures), checked_at: c.checkedAt })
    .onConflict('recording_id')
    .ignore()
}

interface CheckRow {
  id: string
  recording_id: string
  reference_unit_id: string
  serial: string
  pass: boolean
  figures: ReferenceFigures<CheckedFigure>
  checked_at: Date
}

const toCheck = (r: CheckRow): StationCheckView => ({
  id: Number(r.id),
  recordingId: Number(r.recording_id),
  referenceUnitId: Number(r.reference_unit_id),
  serial: r.serial,
  pass: r.pass,
  figures: r.figures,
  checkedAt: r.checked_at.toISOString(),
})

/** A station's checks, newest first. */
export async function listStationChecks(db: Knex, stationId: number, limit: number): Promise<StationCheckView[]> {
  const rows = (await db('station_checks as c')
    .join('reference_units as ru', 'ru.id', 'c.reference_unit_id')
    .join('units as u', 'u.id', 'ru.unit_id')
    .where('c.station_id', stationId)
    .select('c.*', 'u.serial')
    .orderBy('c.id', 'desc')
    .limit(limit)) as CheckRow[]
  return rows.map(toCheck)
}

/** When the Nth production upload on the station after `after` was (null: fewer than N so far). */
export async function nthProductionUploadAfter(db: Knex, stationId: number, after: Date, n: number): Promise<Date | null> {
  const r = await db('recordings').where({ station_id: stationId, purpose: 'production' }).where('uploaded_at', '>', after).orderBy('uploaded_at').offset(n - 1).first('uploaded_at')
  return r?.uploaded_at ?? null
}

/** The latest engineer's release of the station. */
export async function latestRelease(db: Knex, stationId: number): Promise<StationStateInput['release']> {
  const r = await db('station_releases as sr').leftJoin('users as u', 'u.id', 'sr.released_by').where('sr.station_id', stationId).orderBy('sr.id', 'desc').first('sr.at', 'sr.until', 'sr.comment', 'u.display_name')
  return r ? { at: r.at, until: r.until, by: r.display_name ?? null, comment: r.comment } : null
}

export async function insertRelease(db: Knex, stationId: number, by: number | null, comment: string, hours: number): Promise<number> {
  const [row] = await db('station_releases')
    .insert({ station_id: stationId, released_by: by, comment, until: db.raw(`now() + make_interval(secs => ?)`, [hours * 3600]) })
    .returning('id')
  return Number(row.id)
}

/** Every station check of a product's reference units, with each figure's tolerance width, oldest first. */
export async function listProductCheckFigures(
  db: Knex,
  productCode: string,
): Promise<{ stationId: number; stationName: string; figures: ReferenceFigures<CheckedFigure>; limits: ReferenceFigures<VerificationLimit> }[]> {
  const rows = await db('station_checks as c')
    .join('reference_units as ru', 'ru.id', 'c.reference_unit_id')
    .join('products as p', 'p.id', 'ru.product_id')
    .join('stations as s', 's.id', 'c.station_id')
    .where('p.code', productCode)
    .orderBy('c.id')
    .select('c.station_id', 's.name', 'c.figures', 'ru.limits')
  return rows.map((r: { station_id: string; name: string; figures: ReferenceFigures<CheckedFigure>; limits: ReferenceFigures<VerificationLimit> }) => ({ stationId: Number(r.station_id), stationName: r.name, figures: r.figures, limits: r.limits }))
}
