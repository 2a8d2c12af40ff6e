import type { Knex } from 'knex'
import type { AlertView } from '../../shared/types/reports'
import { ALERT_DEFAULTS, type AlertingInput } from '../../shared/utils/alerts'
import { DECISIVE_VERDICTS, type DecisiveVerdict } from '../../shared/utils/verdict'

export type AlertKind = AlertView['kind']

export interface AlertSettings {
  lastN: number
  minYieldPct: number
  enabled: boolean
}

interface SettingsRow {
  last_n: number
  min_yield_pct: number
  enabled: boolean
}

export interface AlertRow {
  id: string
  product_id: string
  lot_id: string | null
  kind: AlertKind
  episode: number
  message: string
  details: Record<string, unknown>
  opened_at: Date
  closed_at: Date | null
  mailed_at: Date | null
}

/** The lot an evaluation works on, with its product's code and name for the e-mail. */
export interface AlertLotRow {
  id: string
  code: string
  product_id: string
  closed_at: Date | null
  product_code: string
  product_name: string
}

/** A product's alert rules, or the defaults when it has none stored. */
export async function getAlertSettings(db: Knex, productId: number): Promise<AlertSettings> {
  const row: SettingsRow | undefined = await db('alert_settings').where({ product_id: productId }).first()
  return row ? { lastN: row.last_n, minYieldPct: row.min_yield_pct, enabled: row.enabled } : { ...ALERT_DEFAULTS }
}

/** The addresses subscribed to a product's alerts, in address order. */
export async function listSubscribers(db: Knex, productId: number | string): Promise<string[]> {
  return db('product_subscribers').where({ product_id: productId }).orderBy('email').pluck<string[]>('email')
}

/** Replaces a product's alert rules and subscribers in one transaction; switching alerts off closes its open alerts. */
export async function replaceAlerting(db: Knex, productId: number, input: AlertingInput, by: number | null): Promise<void> {
  await db.transaction(async (trx) => {
    await trx('alert_settings')
      .insert({ product_id: productId, last_n: input.lastN, min_yield_pct: input.minYieldPct, enabled: input.enabled, updated_by: by, updated_at: trx.fn.now() })
      .onConflict('product_id')
      .merge()
    await trx('product_subscribers').where({ product_id: productId }).whereNotIn('email', input.subscribers).delete()
    if (input.subscribers.length) {
      await trx('product_subscribers')
        .insert(input.subscribers.map((email) => ({ product_id: productId, email })))
        .onConflict(['product_id', 'email'])
        .ignore()
    }
    // Switching alerts off ends the product's open episodes: nobody is watching them any more.
    if (!input.enabled) await trx('alerts').where({ product_id: productId }).whereNull('closed_at').update({ closed_at: trx.fn.now() })
  })
}

function toView(r: AlertRow & { product_code: string; lot_code: string | null }): AlertView {
  return {
    id: Number(r.id),
    productCode: r.product_code,
    lotCode: r.lot_code,
    kind: r.kind,
    message: r.message,
    openedAt: r.opened_at.toISOString(),
    closedAt: r.closed_at?.toISOString() ?? null,
    mailedAt: r.mailed_at?.toISOString() ?? null,
  }
}

/** Alerts newest first, optionally only open (or closed) ones, or one product's. */
export async function listAlerts(db: Knex, filter: { open?: boolean; productCode?: string; limit: number }): Promise<AlertView[]> {
  const q = db('alerts as a')
    .join('products as p', 'p.id', 'a.product_id')
    .leftJoin('lots as l', 'l.id', 'a.lot_id')
    .select('a.*', 'p.code as product_code', 'l.code as lot_code')
    .orderBy('a.opened_at', 'desc')
    .orderBy('a.id', 'desc')
    .limit(filter.limit)
  if (filter.open === true) q.whereNull('a.closed_at')
  if (filter.open === false) q.whereNotNull('a.closed_at')
  if (filter.productCode) q.where('p.code', filter.productCode)
  return ((await q) as (AlertRow & { product_code: string; lot_code: string | null })[]).map(toView)
}

/** The lot of a unit (null when it has none), or the given lot, with its product; undefined for an unknown one. */
export async function findAlertLot(db: Knex, target: { unitId: number } | { lotId: number }): Promise<AlertLotRow | undefined> {
  const lotId = 'lotId' in target ? target.lotId : ((await db('units').where({ id: target.unitId }).first('lot_id')) as { lot_id: string | null } | undefined)?.lot_id
  if (lotId === null || lotId === undefined) return undefined
  return db('lots as l')
    .join('products as p', 'p.id', 'l.product_id')
    .where('l.id', lotId)
    .first('l.id', 'l.code', 'l.product_id', 'l.closed_at', 'p.code as product_code', 'p.name as product_name')
}

/** Serialises the alert evaluations of one lot until the transaction ends, so concurrent workers agree. */
export async function lockLotAlerts(trx: Knex.Transaction, lotId: number | string): Promise<void> {
  await trx.raw('SELECT pg_advisory_xact_lock(hashtextextended(?, 0))', [`conetrail:alerts:lot:${lotId}`])
}

/**
 * The verdict of each unit's latest decisive (pass or fail) production result in the lot, newest
 * unit first, at most n: a retest decides nothing, so it is neither a pass nor a fail here.
 */
export async function latestLotVerdicts(db: Knex, lotId: number, n: number): Promise<DecisiveVerdict[]> {
  const rows = await db
    .select('verdict')
    .from(
      db('results as r')
        .join('units as u', 'u.id', 'r.unit_id')
        .join('recordings as rec', 'rec.id', 'r.recording_id')
        .where('u.lot_id', lotId)
        .whereIn('r.verdict', [...DECISIVE_VERDICTS])
        .where('rec.purpose', 'production')
        .distinctOn('r.unit_id')
        .select('r.unit_id', 'r.id', 'r.verdict')
        .orderBy([{ column: 'r.unit_id' }, { column: 'r.id', order: 'desc' }])
        .as('latest'),
    )
    .orderBy('id', 'desc')
    .limit(n)
  return rows.map((r: { verdict: DecisiveVerdict }) => r.verdict)
}

export interface DriftRow {
  serial: string
  fs_hz: number | null
  re20_ohm: number | null
}

/**
 * Fs and Re at 20 °C of each unit's first production result in the lot that did not end `retest`
 * (a retest's recording was disturbed: its figures are not the unit's), in production order.
 */
export async function listLotFirstFigures(db: Knex, lotId: number): Promise<DriftRow[]> {
  return db
    .select('serial', 'fs_hz', 're20_ohm')
    .from(
      db('results as r')
        .join('units as u', 'u.id', 'r.unit_id')
        .join('recordings as rec', 'rec.id', 'r.recording_id')
        .where('u.lot_id', lotId)
        .where('rec.purpose', 'production')
        .where((q) => q.whereNull('r.verdict').orWhereNot('r.verdict', 'retest'))
        .distinctOn('r.unit_id')
        .select('r.unit_id', 'r.id', 'u.serial', 'r.fs_hz', 'r.re20_ohm')
        .orderBy([{ column: 'r.unit_id' }, { column: 'r.id', order: 'asc' }])
        .as('first'),
    )
    .orderBy('id', 'asc')
}

/**
 * Opens an episode of an alert for the lot; null when one is already open (a partial unique
 * index holds one open alert per product, lot and kind).
 */
export async function openAlert(trx: Knex.Transaction, lot: AlertLotRow, kind: AlertKind, message: string, details: Record<string, unknown>): Promise<number | null> {
  const { rows } = await trx.raw<{ rows: { id: string }[] }>(
    `INSERT INTO alerts (product_id, lot_id, kind, episode, message, details)
     SELECT ?, ?, ?, coalesce(max(episode), 0) + 1, ?, ?::jsonb FROM alerts WHERE product_id = ? AND coalesce(lot_id, 0) = ? AND kind = ?
     ON CONFLICT (product_id, coalesce(lot_id, 0), kind) WHERE closed_at IS NULL DO NOTHING
     RETURNING id`,
    [lot.product_id, lot.id, kind, message, JSON.stringify(details), lot.product_id, lot.id, kind],
  )
  return rows[0] ? Number(rows[0].id) : null
}

/** Closes the lot's open alert of a kind; null when none was open. */
export async function closeAlert(trx: Knex.Transaction, lot: AlertLotRow, kind: AlertKind): Promise<number | null> {
  const rows = await trx('alerts').where({ product_id: lot.product_id, lot_id: lot.id, kind }).whereNull('closed_at').update({ closed_at: trx.fn.now() }).returning('id')
  return rows[0] ? Number(rows[0].id) : null
}

/** The lot's open alerts not mailed yet, oldest first. */
export async function listUnmailedOpenAlerts(db: Knex, lotId: number | string): Promise<AlertRow[]> {
  return db('alerts').where({ lot_id: lotId }).whereNull('closed_at').whereNull('mailed_at').orderBy('id')
}

/** Claims an alert's e-mail (sets mailed_at); false when another worker claimed it first. */
export async function claimAlertMail(db: Knex, alertId: number | string): Promise<boolean> {
  const claimed = await db('alerts').where({ id: alertId }).whereNull('mailed_at').update({ mailed_at: db.fn.now() }).returning('id')
  return claimed.length > 0
}

/** Gives back a claim whose e-mail did not go out, so the next evaluation tries again. */
export async function releaseAlertMail(db: Knex, alertId: number | string): Promise<void> {
  await db('alerts').where({ id: alertId }).update({ mailed_at: null })
}
