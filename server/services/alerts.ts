/**
 * Alert rules (issue 6, "E-mail"), evaluated after each saved result:
 * - low yield: the yield of the last N judged units of an open lot (each unit's latest judged
 *   result, return tests left out) below the product's threshold. Evaluated once the lot has N
 *   judged units, so a few early failures of a new lot do not raise the alarm on their own;
 * - drift: the I-MR chart (server/stats) of Fs and of Re at 20 °C over the lot's production order
 *   (each unit's first result) signals a Western Electric run rule at the latest unit.
 * An alert is an episode: it opens when its condition starts (one open per product, lot and kind,
 * held by a partial unique index), is mailed to the product's subscribers once, and closes when
 * the condition clears; a later return of the condition is a new episode and a new e-mail.
 */
import type { Knex } from 'knex'
import type { AlertView } from '../../shared/types/reports'
import { ALERT_DEFAULTS, type AlertingInput, type AlertingView } from '../../shared/utils/alerts'
import { describeSignal, imrChart, RUN_RULES, type Verdict } from '../stats/index'
import { sendMail, type OutgoingMail } from '../mail/index'

export type AlertKind = AlertView['kind']

export interface AlertSettings {
  lastN: number
  minYieldPct: number
  enabled: boolean
}

// ---------------------------------------------------------------------------------------------
// Pure decisions (unit-tested)

export interface YieldWindow {
  /** False while the lot has fewer than N judged units. */
  evaluated: boolean
  units: number
  passed: number
  yieldPct: number | null
  low: boolean
}

/** The low-yield rule on the latest verdicts of the last judged units, newest first. */
export function yieldWindow(verdicts: readonly Verdict[], s: Pick<AlertSettings, 'lastN' | 'minYieldPct'>): YieldWindow {
  const window = verdicts.slice(0, s.lastN)
  const passed = window.filter((v) => v === 'pass').length
  const yieldPct = window.length ? (100 * passed) / window.length : null
  const evaluated = window.length >= s.lastN
  return { evaluated, units: window.length, passed, yieldPct, low: evaluated && yieldPct !== null && yieldPct < s.minYieldPct }
}

export interface DriftSeries {
  label: string
  unit: string
  values: number[]
  serials: string[]
}

/** Plain-language warnings for the run rules that fire at the latest point of each series (empty: no drift now). */
export function driftAtLatest(series: readonly DriftSeries[]): string[] {
  const warnings: string[] = []
  for (const s of series) {
    const chart = imrChart(s.values, { rules: RUN_RULES, movingRange: false })
    if (!chart) continue
    const last = s.values.length - 1
    for (const signal of chart.signals.filter((x) => x.index === last)) warnings.push(describeSignal(signal, { label: s.label, unit: s.unit }, s.serials))
  }
  return warnings
}

// ---------------------------------------------------------------------------------------------
// Settings and subscribers

interface SettingsRow {
  last_n: number
  min_yield_pct: number
  enabled: boolean
}

export async function getAlertSettings(db: Knex, productId: number): Promise<AlertSettings> {
  const row: SettingsRow | undefined = await db('alert_settings').where({ product_id: productId }).first()
  return row ? { lastN: row.last_n, minYieldPct: row.min_yield_pct, enabled: row.enabled } : { ...ALERT_DEFAULTS }
}

export async function getAlerting(db: Knex, productId: number): Promise<AlertingView> {
  const subscribers = await db('product_subscribers').where({ product_id: productId }).orderBy('email').pluck<string[]>('email')
  return { ...(await getAlertSettings(db, productId)), subscribers }
}

/** Replaces a product's alert rules and subscribers in one transaction. */
export async function setAlerting(db: Knex, productId: number, input: AlertingInput, by: number | null): Promise<AlertingView> {
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
  return getAlerting(db, productId)
}

// ---------------------------------------------------------------------------------------------
// Listing

interface AlertRow {
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

// ---------------------------------------------------------------------------------------------
// Evaluation

export type Mailer = (mail: OutgoingMail) => Promise<unknown>

export interface AlertChange {
  alertId: number
  kind: AlertKind
  change: 'opened' | 'closed' | 'mailed'
}

interface LotRow {
  id: string
  code: string
  product_id: string
  closed_at: Date | null
  product_code: string
  product_name: string
}

async function latestVerdicts(db: Knex, lotId: number, n: number): Promise<Verdict[]> {
  const rows = await db
    .select('verdict')
    .from(
      db('results as r')
        .join('units as u', 'u.id', 'r.unit_id')
        .join('recordings as rec', 'rec.id', 'r.recording_id')
        .where('u.lot_id', lotId)
        .whereNotNull('r.verdict')
        .where('rec.is_return_test', false)
        .distinctOn('r.unit_id')
        .select('r.unit_id', 'r.id', 'r.verdict')
        .orderBy([{ column: 'r.unit_id' }, { column: 'r.id', order: 'desc' }])
        .as('latest'),
    )
    .orderBy('id', 'desc')
    .limit(n)
  return rows.map((r: { verdict: Verdict }) => r.verdict)
}

async function driftSeries(db: Knex, lotId: number): Promise<DriftSeries[]> {
  const rows: { serial: string; fs_hz: number | null; re20_ohm: number | null }[] = await db
    .select('serial', 'fs_hz', 're20_ohm')
    .from(
      db('results as r')
        .join('units as u', 'u.id', 'r.unit_id')
        .join('recordings as rec', 'rec.id', 'r.recording_id')
        .where('u.lot_id', lotId)
        .where('rec.is_return_test', false)
        .distinctOn('r.unit_id')
        .select('r.unit_id', 'r.id', 'u.serial', 'r.fs_hz', 'r.re20_ohm')
        .orderBy([{ column: 'r.unit_id' }, { column: 'r.id', order: 'asc' }])
        .as('first'),
    )
    .orderBy('id', 'asc')
  const series = (label: string, unit: string, pick: (r: (typeof rows)[number]) => number | null): DriftSeries => {
    const kept = rows.filter((r) => Number.isFinite(pick(r)))
    return { label, unit, values: kept.map((r) => pick(r)!), serials: kept.map((r) => r.serial) }
  }
  // A unit whose latest result lacks one figure simply is not on that chart.
  return [series('Fs', 'Hz', (r) => r.fs_hz), series('Re at 20 °C', 'Ω', (r) => r.re20_ohm)]
}

const fmtPct = (x: number) => `${Math.round(x * 10) / 10} %`

async function openAlert(trx: Knex.Transaction, lot: LotRow, kind: AlertKind, message: string, details: Record<string, unknown>): Promise<number | null> {
  const { rows } = await trx.raw<{ rows: { id: string }[] }>(
    `INSERT INTO alerts (product_id, lot_id, kind, episode, message, details)
     SELECT ?, ?, ?, coalesce(max(episode), 0) + 1, ?, ?::jsonb FROM alerts WHERE product_id = ? AND coalesce(lot_id, 0) = ? AND kind = ?
     ON CONFLICT (product_id, coalesce(lot_id, 0), kind) WHERE closed_at IS NULL DO NOTHING
     RETURNING id`,
    [lot.product_id, lot.id, kind, message, JSON.stringify(details), lot.product_id, lot.id, kind],
  )
  return rows[0] ? Number(rows[0].id) : null
}

async function closeAlert(trx: Knex.Transaction, lot: LotRow, kind: AlertKind): Promise<number | null> {
  const rows = await trx('alerts').where({ product_id: lot.product_id, lot_id: lot.id, kind }).whereNull('closed_at').update({ closed_at: trx.fn.now() }).returning('id')
  return rows[0] ? Number(rows[0].id) : null
}

function mailFor(a: AlertRow, lot: LotRow, s: AlertSettings): Pick<OutgoingMail, 'subject' | 'text'> {
  const what = a.kind === 'low_yield' ? 'Low yield' : 'Process drift'
  const clears =
    a.kind === 'low_yield'
      ? `It closes when the yield of the last ${s.lastN} units is back at or above ${fmtPct(s.minYieldPct)}.`
      : 'It closes when the latest unit no longer signals on the control charts.'
  return {
    subject: `[Conetrail] ${what}: lot ${lot.code} (${lot.product_code})`,
    text: [
      `${what} in lot ${lot.code} of ${lot.product_code} (${lot.product_name}), alert #${a.id}, episode ${a.episode}.`,
      '',
      a.message,
      '',
      `Opened ${a.opened_at.toISOString()}. ${clears}`,
      'You get one e-mail per episode: none while this alert stays open, a new one if the condition returns after it closed.',
      '',
      `You receive this because you subscribe to alerts for product ${lot.product_code}.`,
    ].join('\n'),
  }
}

/**
 * Mails each open alert of the lot not mailed yet. The row is claimed (mailed_at set) before
 * sending, so two workers never both send it; a failed send releases the claim for the next try.
 */
async function mailOpenAlerts(db: Knex, lot: LotRow, s: AlertSettings, send: Mailer, log: (m: string) => void): Promise<AlertChange[]> {
  const subscribers: string[] = await db('product_subscribers').where({ product_id: lot.product_id }).orderBy('email').pluck('email')
  if (!subscribers.length) return []
  const changes: AlertChange[] = []
  const pending: AlertRow[] = await db('alerts').where({ lot_id: lot.id }).whereNull('closed_at').whereNull('mailed_at').orderBy('id')
  for (const a of pending) {
    const claimed = await db('alerts').where({ id: a.id }).whereNull('mailed_at').update({ mailed_at: db.fn.now() }).returning('id')
    if (!claimed.length) continue
    try {
      await send({ to: subscribers, ...mailFor(a, lot, s) })
      changes.push({ alertId: Number(a.id), kind: a.kind, change: 'mailed' })
    } catch (err) {
      await db('alerts').where({ id: a.id }).update({ mailed_at: null })
      log(`alert ${a.id}: e-mail not sent, will retry with the next result: ${err instanceof Error ? err.message : String(err)}`)
    }
  }
  return changes
}

/**
 * Evaluates the alert rules of the lot of a unit (or a lot): opens and closes alerts and mails new
 * ones. Units without a lot, closed lots and products with alerts disabled are left alone.
 * Evaluations of one lot are serialised by an advisory lock, so concurrent workers agree.
 */
export async function evaluateAlerts(
  db: Knex,
  target: { unitId: number } | { lotId: number },
  opts: { send?: Mailer; log?: (msg: string) => void } = {},
): Promise<AlertChange[]> {
  const send = opts.send ?? sendMail
  const log = opts.log ?? ((m: string) => console.log(`[alerts] ${m}`))
  const lotId = 'lotId' in target ? target.lotId : ((await db('units').where({ id: target.unitId }).first('lot_id')) as { lot_id: string | null } | undefined)?.lot_id
  if (lotId === null || lotId === undefined) return []
  const lot: LotRow | undefined = await db('lots as l')
    .join('products as p', 'p.id', 'l.product_id')
    .where('l.id', lotId)
    .first('l.id', 'l.code', 'l.product_id', 'l.closed_at', 'p.code as product_code', 'p.name as product_name')
  if (!lot || lot.closed_at) return []
  const settings = await getAlertSettings(db, Number(lot.product_id))
  if (!settings.enabled) return []

  const changes: AlertChange[] = []
  await db.transaction(async (trx) => {
    await trx.raw('SELECT pg_advisory_xact_lock(hashtextextended(?, 0))', [`conetrail:alerts:lot:${lot.id}`])
    const y = yieldWindow(await latestVerdicts(trx, Number(lot.id), settings.lastN), settings)
    if (y.low) {
      const message = `Yield ${fmtPct(y.yieldPct!)} over the last ${y.units} judged units of lot ${lot.code} (${y.units - y.passed} failed), below the ${fmtPct(settings.minYieldPct)} threshold.`
      const id = await openAlert(trx, lot, 'low_yield', message, { ...y, minYieldPct: settings.minYieldPct })
      if (id) changes.push({ alertId: id, kind: 'low_yield', change: 'opened' })
    } else if (y.evaluated) {
      const id = await closeAlert(trx, lot, 'low_yield')
      if (id) changes.push({ alertId: id, kind: 'low_yield', change: 'closed' })
    }
    const warnings = driftAtLatest(await driftSeries(trx, Number(lot.id)))
    if (warnings.length) {
      const id = await openAlert(trx, lot, 'drift', warnings.join('\n'), { warnings })
      if (id) changes.push({ alertId: id, kind: 'drift', change: 'opened' })
    } else {
      const id = await closeAlert(trx, lot, 'drift')
      if (id) changes.push({ alertId: id, kind: 'drift', change: 'closed' })
    }
  })
  // Mail after the commit: a rolled-back alert is never announced.
  changes.push(...(await mailOpenAlerts(db, lot, settings, send, log)))
  return changes
}
