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
