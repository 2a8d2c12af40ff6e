/**
 * The lot's CSV export: one row per unit (papaparse `unparse`, which quotes cells holding commas,
 * quotes or line breaks as RFC 4180 asks).
 *
 * Spreadsheet formula injection: a cell starting with =, +, -, @, a tab or a carriage return may be
 * run as a formula when the file is opened, so such a cell gets a leading single quote (OWASP,
 * "CSV Injection"). The Unicode minus (U+2212) and the full-width equals and plus signs are
 * treated the same, since some spreadsheets read them as formula starts (our caution).
 */
import Papa from 'papaparse'
import type { LotUnitRow } from '../services/lot-report.ts'
import type { MaskView } from '../../shared/types/api.ts'
import { CHECK_LABELS, SCALAR_LIMIT_NAMES } from '../../shared/utils/mask.ts'

const FORMULA_START = /^[=+\-@\t\r\u2212\uFF1D\uFF0B]/

/** A cell safe to open in a spreadsheet: text starting like a formula gets a leading single quote. */
export function neutraliseCell(value: unknown): string {
  if (value === null || value === undefined) return ''
  const s = typeof value === 'number' ? (Number.isFinite(value) ? String(value) : '') : String(value)
  // Numbers are written by us and may be negative: only text can carry a formula.
  if (typeof value === 'number') return s
  return FORMULA_START.test(s) ? `'${s}` : s
}

export const CSV_COLUMNS = [
  'serial', 'product', 'lot', 'first_test_at', 'last_test_at', 'tests', 'first_verdict', 'final_verdict', 'failed_checks',
  'fs_hz', 're20_ohm', 'qts', 'sensitivity_db', 'thd_max_pct', 'rub_buzz_db', 'returns',
  // Added with the retest verdict, after the columns that were there before (their order and meaning are kept).
  'retests', 'retest_reasons',
] as const

/** The CSV text of a lot's units (header row first, CRLF line ends). */
export function lotUnitsCsv(rows: readonly LotUnitRow[]): string {
  const data = rows.map((r) =>
    [
      r.serial, r.product, r.lot, r.firstTestAt, r.lastTestAt, r.tests, r.firstVerdict ?? '', r.finalVerdict ?? '', r.failedChecks.join(' '),
      r.fsHz, r.re20Ohm, r.qts, r.sensitivityDb, r.thdMaxPct, r.rubBuzzDb, r.returns,
      r.retests, r.retestReasons.join(' '),
    ].map(neutraliseCell),
  )
  return Papa.unparse({ fields: [...CSV_COLUMNS], data }, { newline: '\r\n', quotes: false })
}

export const MASK_CSV_COLUMNS = [
  'product', 'mask_version', 'status', 'decision_rule', 'check', 'label', 'unit', 'freq_hz', 'low', 'high',
  'rule', 'golden_n', 'k', 'coverage', 'floor', 'est_false_reject_pct',
] as const

/**
 * A mask's limits as CSV: one row per scalar limit with how it was proposed (rule, n, k, the
 * coverage it was built for, the floor as a half-width) and its estimated false-reject share; one
 * row per curve breakpoint; the fixed checks last. `rule` reads `edited` where the engineer changed
 * the proposed limit.
 */
export function maskLimitsCsv(m: MaskView): string {
  const head = [m.product, m.version, m.status, m.limits.decisionRule]
  const proposed = (m.proposal?.proposedLimits ?? null) as { scalars?: Record<string, { low: number | null; high: number | null }> } | null
  const pct = (share: number | undefined) => (share === undefined ? null : Number((100 * share).toPrecision(3)))
  const rows: unknown[][] = []
  for (const name of SCALAR_LIMIT_NAMES) {
    const lim = m.limits.scalars[name]
    if (!lim) continue
    const b = m.proposal?.scalars[name]
    const was = proposed?.scalars?.[name]
    const edited = b && was && (was.low !== lim.low || was.high !== lim.high)
    const label = CHECK_LABELS[name]!
    rows.push([...head, name, label.label, label.unit, null, lim.low, lim.high, b ? (edited ? 'edited' : b.rule) : null, b?.n, b?.k, b?.coverage, b?.floor, pct(m.estimate.byCheck[name])])
  }
  for (const name of ['splDb', 'impedanceOhm'] as const) {
    const c = m.limits.curves[name]
    if (!c) continue
    const b = m.proposal?.curves[name]
    const label = CHECK_LABELS[name]!
    c.freqHz.forEach((f, i) => rows.push([...head, name, label.label, label.unit, f, c.low[i], c.high[i], b?.rule, b?.n, b?.k, b?.coverage, null, i === 0 ? pct(m.estimate.byCheck[name]) : null]))
  }
  if (m.limits.polarityNormal) rows.push([...head, 'polarity', CHECK_LABELS.polarity!.label, '', null, null, null, 'fixed', null, null, null, null, null])
  rows.push([...head, 'ratedImpedance', CHECK_LABELS.ratedImpedance!.label, 'Ω', null, null, null, 'IEC 60268-5: at least 80 % of rated', null, null, null, null, null])
  return Papa.unparse({ fields: [...MASK_CSV_COLUMNS], data: rows.map((r) => r.map(neutraliseCell)) }, { newline: '\r\n', quotes: false })
}
