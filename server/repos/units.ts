import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import type { Knex } from 'knex'
import type { UnitHit } from '../../shared/types/units.ts'
import type { Verdict } from '../../shared/utils/verdict.ts'

export interface UnitRow {
  id: string
  serial: string
  product_id: string
  lot_id: string | null
  created_at: Date
}

export const UNIT_INPUT_ERROR_CODES = ['unknown_serial', 'unknown_product', 'lot_product_mismatch', 'unit_product_mismatch'] as const satisfies readonly ErrorCode[]
export class UnitInputError extends DomainError<(typeof UNIT_INPUT_ERROR_CODES)[number]> {}

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

/** The LIKE pattern matching text that starts with `prefix` (its % _ \ taken literally). */
export function likePrefix(prefix: string): string {
  return `${prefix.replace(/[\\%_]/g, '\\$&')}%`
}

/**
 * Units whose serial equals this one, case ignored (serials are unique as written, so two may
 * differ only in case), exact spelling first. Uses units_serial_lower_prefix.
 */
export async function findUnitIdsBySerialIgnoringCase(db: Knex, serial: string): Promise<{ id: number; serial: string }[]> {
  const rows: { id: string; serial: string }[] = await db('units')
    .whereRaw('lower(serial) = lower(?)', [serial])
    .orderByRaw('serial = ? desc, id desc', [serial])
    .select('id', 'serial')
  return rows.map((r) => ({ id: Number(r.id), serial: r.serial }))
}

/**
 * Ids of units whose serial starts with `prefix` (case ignored), newest registered first, at most
 * `limit`; `more` when some were left out. Every read is a bounded range of the prefix index: when
 * at most `scanCap` units match, all of them are sorted by age; a broader prefix (say the first
 * letters of a product's serials) takes the `scanCap` highest serials and lists the newest of those,
 * which for serials given out in order are the newest units. (Reading the newest units and
 * filtering them by prefix instead costs a scan of the whole table when the prefix is an old one.)
 */
export async function findUnitIdsByPrefix(db: Knex, prefix: string, limit: number, scanCap = 5000): Promise<{ ids: number[]; more: boolean }> {
  const pattern = likePrefix(prefix.toLowerCase())
  const matching = () => db('units').whereRaw('lower(serial) like ?', [pattern])
  const narrow: { id: string }[] = await matching().limit(scanCap + 1).select('id')
  if (narrow.length <= scanCap) {
    const ids = narrow.map((r) => Number(r.id)).sort((a, b) => b - a)
    return { ids: ids.slice(0, limit), more: ids.length > limit }
  }
  // ~>~ is the descending order of text_pattern_ops, so the index hands the rows over in order.
  const highest = matching().orderByRaw('lower(serial) using ~>~').limit(scanCap).select('id')
  const rows: { id: string }[] = await db.from(highest.as('m')).orderBy('id', 'desc').limit(limit).select('id')
  return { ids: rows.map((r) => Number(r.id)), more: true }
}

/** Serials ending with `suffix` (case ignored), at most `limit`, in the suffix index's order (units_serial_lower_suffix). */
export async function serialsEndingWith(db: Knex, suffix: string, limit: number): Promise<string[]> {
  const reversed = [...suffix.toLowerCase()].reverse().join('')
  return db('units').whereRaw('reverse(lower(serial)) like ?', [likePrefix(reversed)]).orderByRaw('reverse(lower(serial)) using ~<~').limit(limit).pluck('serial')
}

/** Serials starting with `prefix` (case ignored), at most `limit`, in the prefix index's (byte) order: ~<~ is text_pattern_ops' own order, so no sort is needed. */
export async function serialsStartingWith(db: Knex, prefix: string, limit: number): Promise<string[]> {
  return db('units').whereRaw('lower(serial) like ?', [likePrefix(prefix.toLowerCase())]).orderByRaw('lower(serial) using ~<~').limit(limit).pluck('serial')
}

/**
 * A bounded set of serials that may be near a mistyped one. One wrong, missing, extra or swapped
 * character leaves either the part before it or the part after it intact, and one of the two is at
 * least half the serial: so serials sharing the query's longest prefix, and those sharing its
 * longest suffix, down to half its length, hold every serial one mistake away. Each step is one
 * index range read of at most `perSide` rows.
 */
export async function nearSerialCandidates(db: Knex, query: string, perSide = 25): Promise<string[]> {
  const q = query.toLowerCase()
  const shortest = Math.max(2, Math.floor((q.length - 1) / 2))
  const found = new Set<string>()
  for (const side of ['prefix', 'suffix'] as const) {
    let taken = 0
    for (let k = q.length - 1; k >= shortest && taken < perSide; k--) {
      const part = side === 'prefix' ? q.slice(0, k) : q.slice(q.length - k)
      const serials = side === 'prefix' ? await serialsStartingWith(db, part, perSide) : await serialsEndingWith(db, part, perSide)
      for (const s of serials) found.add(s)
      taken = serials.length
    }
  }
  return [...found]
}

interface HitRow {
  id: string
  serial: string
  product_code: string
  product_name: string
  lot_code: string | null
  last_tested_at: Date | null
  tests: string
  verdict: Verdict | null
}

/**
 * Units by id or serial with their product, lot, latest upload, number of tests and their verdict:
 * that of their latest finished production test that is not a retest, or `retest` when all are
 * (shared/utils/verdict.ts unitVerdictOf), in the order asked.
 */
export async function getUnitHits(db: Knex, by: { ids: number[] } | { serials: string[] }): Promise<UnitHit[]> {
  const q = db('units as u')
    .join('products as p', 'p.id', 'u.product_id')
    .leftJoin('lots as l', 'l.id', 'u.lot_id')
    .joinRaw('cross join lateral (select max(r.uploaded_at) as last_tested_at, count(*) as tests from recordings r where r.unit_id = u.id) t')
    .joinRaw(
      // Retests decide nothing: the latest other result's verdict, or `retest` when there are only retests (unitVerdictOf).
      `left join lateral (select res.verdict from recordings r join results res on res.recording_id = r.id
        where r.unit_id = u.id and r.status = 'done' and r.purpose = 'production'
        order by res.verdict is not distinct from 'retest', r.id desc limit 1) v on true`,
    )
    .select('u.id', 'u.serial', 'p.code as product_code', 'p.name as product_name', 'l.code as lot_code', 't.last_tested_at', 't.tests', 'v.verdict')
  if ('ids' in by) q.whereIn('u.id', by.ids)
  else q.whereIn('u.serial', by.serials)
  const rows: HitRow[] = await q
  const order = 'ids' in by ? by.ids.map(String) : by.serials
  const key = (r: HitRow) => ('ids' in by ? r.id : r.serial)
  return rows
    .sort((a, b) => order.indexOf(key(a)) - order.indexOf(key(b)))
    .map((r) => ({
      serial: r.serial,
      productCode: r.product_code,
      productName: r.product_name,
      lotCode: r.lot_code,
      lastTestedAt: r.last_tested_at ? r.last_tested_at.toISOString() : null,
      tests: Number(r.tests),
      verdict: r.verdict,
    }))
}

/** Per recording of a unit: who uploaded it (a person, or none when a station posted with its token), the station's line and profile version. */
export async function listTestContext(db: Knex, unitId: number): Promise<
  { id: number; uploadedBy: string | null; stationName: string | null; stationLine: string | null; profileVersion: number | null; ambientC: number | null; note: string | null }[]
> {
  const rows: { id: string; display_name: string | null; station_name: string | null; line: string | null; version: number | null; ambient_c: number | null; note: string | null }[] = await db('recordings as r')
    .leftJoin('users as usr', 'usr.id', 'r.uploaded_by')
    .leftJoin('stations as s', 's.id', 'r.station_id')
    .leftJoin('station_profiles as sp', 'sp.id', 'r.station_profile_id')
    .where('r.unit_id', unitId)
    .select('r.id', 'usr.display_name', 's.name as station_name', 's.line', 'sp.version', 'r.ambient_c', 'r.note')
  return rows.map((r) => ({
    id: Number(r.id),
    uploadedBy: r.display_name,
    stationName: r.station_name,
    stationLine: r.line,
    profileVersion: r.version,
    ambientC: r.ambient_c,
    note: r.note,
  }))
}
