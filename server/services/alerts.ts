/**
 * Alert rules, evaluated after each saved result so quality hears of a problem by e-mail while the
 * lot is still on the line:
 * - low yield: the yield of the last N judged units of an open lot (each unit's latest decisive
 *   result, return tests left out; a retest is no fail) below the product's threshold. Evaluated once the lot has N
 *   judged units, so a few early failures of a new lot do not raise the alarm on their own;
 * - drift: the I-MR chart (server/stats) of Fs and of Re at 20 °C over the lot's production order
 *   (each unit's first result that is not a retest) signals a Western Electric run rule at the latest unit.
 * An alert is an episode: it opens when its condition starts (one open per product, lot and kind,
 * held by a partial unique index), is mailed to the product's subscribers once, and closes when
 * the condition clears; a later return of the condition is a new episode and a new e-mail.
 */
import type { Knex } from 'knex'
import type { AlertingInput, AlertingView } from '../../shared/utils/alerts'
import { describeSignal, imrChart, RUN_RULES } from '../stats/index'
import { isDecisive, type Verdict } from '../../shared/utils/verdict'
import { sendMail, type OutgoingMail } from '../mail/index'
import {
  claimAlertMail,
  closeAlert,
  findAlertLot,
  getAlertSettings,
  latestLotVerdicts,
  listLotFirstFigures,
  listSubscribers,
  listUnmailedOpenAlerts,
  lockLotAlerts,
  openAlert,
  releaseAlertMail,
  replaceAlerting,
  type AlertKind,
  type AlertLotRow,
  type AlertRow,
  type AlertSettings,
} from '../repos/alerts'

export { getAlertSettings, listAlerts } from '../repos/alerts'
export type { AlertKind, AlertSettings } from '../repos/alerts'

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

/**
 * The low-yield rule on the latest verdicts of the last judged units, newest first. Only decisive
 * verdicts count: a retest is neither a pass nor a fail (the unit is measured again).
 */
export function yieldWindow(verdicts: readonly (Verdict | null)[], s: Pick<AlertSettings, 'lastN' | 'minYieldPct'>): YieldWindow {
  const window = verdicts.filter(isDecisive).slice(0, s.lastN)
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

export async function getAlerting(db: Knex, productId: number): Promise<AlertingView> {
  const subscribers = await listSubscribers(db, productId)
  return { ...(await getAlertSettings(db, productId)), subscribers }
}

/** Replaces a product's alert rules and subscribers in one transaction. */
export async function setAlerting(db: Knex, productId: number, input: AlertingInput, by: number | null): Promise<AlertingView> {
  await replaceAlerting(db, productId, input, by)
  return getAlerting(db, productId)
}

// ---------------------------------------------------------------------------------------------
// Evaluation

export type Mailer = (mail: OutgoingMail) => Promise<unknown>

export interface AlertChange {
  alertId: number
  kind: AlertKind
  change: 'opened' | 'closed' | 'mailed'
}

async function driftSeries(db: Knex, lotId: number): Promise<DriftSeries[]> {
  const rows = await listLotFirstFigures(db, lotId)
  const series = (label: string, unit: string, pick: (r: (typeof rows)[number]) => number | null): DriftSeries => {
    const kept = rows.filter((r) => Number.isFinite(pick(r)))
    return { label, unit, values: kept.map((r) => pick(r)!), serials: kept.map((r) => r.serial) }
  }
  // A unit whose latest result lacks one figure simply is not on that chart.
  return [series('Fs', 'Hz', (r) => r.fs_hz), series('Re at 20 °C', 'Ω', (r) => r.re20_ohm)]
}

const fmtPct = (x: number) => `${Math.round(x * 10) / 10} %`

function mailFor(a: AlertRow, lot: AlertLotRow, s: AlertSettings): Pick<OutgoingMail, 'subject' | 'text'> {
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
async function mailOpenAlerts(db: Knex, lot: AlertLotRow, s: AlertSettings, send: Mailer, log: (m: string) => void): Promise<AlertChange[]> {
  const subscribers = await listSubscribers(db, lot.product_id)
  if (!subscribers.length) return []
  const changes: AlertChange[] = []
  for (const a of await listUnmailedOpenAlerts(db, lot.id)) {
    if (!(await claimAlertMail(db, a.id))) continue
    try {
      await send({ to: subscribers, ...mailFor(a, lot, s) })
      changes.push({ alertId: Number(a.id), kind: a.kind, change: 'mailed' })
    } catch (err) {
      await releaseAlertMail(db, a.id)
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
  const lot = await findAlertLot(db, target)
  if (!lot || lot.closed_at) return []
  const settings = await getAlertSettings(db, Number(lot.product_id))
  if (!settings.enabled) return []

  const changes: AlertChange[] = []
  await db.transaction(async (trx) => {
    await lockLotAlerts(trx, lot.id)
    const y = yieldWindow(await latestLotVerdicts(trx, Number(lot.id), settings.lastN), settings)
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
