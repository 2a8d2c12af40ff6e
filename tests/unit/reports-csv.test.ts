import Papa from 'papaparse'
import { describe, expect, it } from 'vitest'
import { CSV_COLUMNS, lotUnitsCsv, neutraliseCell } from '../../server/reports/csv'
import type { LotUnitRow } from '../../server/services/lot-report'

/**
 * Spreadsheet formula injection: a text cell starting with =, +, -, @, a tab or a carriage return
 * gets a leading single quote (OWASP, "CSV Injection"). Quoting of commas, quotes and line breaks:
 * RFC 4180, section 2.
 */
describe('neutraliseCell', () => {
  it.each([
    ['=SUM(A1:A9)', "'=SUM(A1:A9)"],
    ['+1+2', "'+1+2"],
    ['-2+3', "'-2+3"],
    ['@cmd', "'@cmd"],
    ['\t=1', "'\t=1"],
    ['\r=1', "'\r=1"],
    ['\u2212 1', "'\u2212 1"], // Unicode minus sign
    ['\uFF1D1', "'\uFF1D1"], // full-width equals sign
    ['AB12-000123', 'AB12-000123'], // a dash inside is harmless
    ['a=b', 'a=b'],
    ["'quoted", "'quoted"],
    ['', ''],
  ])('text %j → %j', (input, expected) => {
    expect(neutraliseCell(input)).toBe(expected)
  })

  it.each([
    [-62.5, '-62.5'], // our own numbers: a negative rub-and-buzz level stays a number
    [5.81, '5.81'],
    [Number.NaN, ''],
    [null, ''],
    [undefined, ''],
  ])('value %j → %j', (input, expected) => {
    expect(neutraliseCell(input)).toBe(expected)
  })
})

const base: LotUnitRow = {
  serial: 'AB12-000123',
  product: 'W525-8',
  lot: 'L2611-07',
  firstTestAt: '2026-12-01T08:00:00.000Z',
  lastTestAt: '2026-12-01T08:05:00.000Z',
  tests: 2,
  firstVerdict: 'fail',
  finalVerdict: 'pass',
  failedChecks: [],
  fsHz: 41.25,
  re20Ohm: 5.8,
  qts: 0.42,
  sensitivityDb: 87.1,
  thdMaxPct: 1.2,
  rubBuzzDb: -62.5,
  returns: 0,
  retests: 0,
  retestReasons: [],
}

describe('lotUnitsCsv', () => {
  it('writes the header and one row per unit, numbers as numbers', () => {
    const csv = lotUnitsCsv([base, { ...base, serial: 'AB12-000124', tests: 1, firstVerdict: 'fail', finalVerdict: 'fail', failedChecks: ['polarity', 'fsHz'], fsHz: null, returns: 2 }])
    const lines = csv.split('\r\n')
    expect(lines[0]).toBe(CSV_COLUMNS.join(','))
    expect(lines[1]).toBe('AB12-000123,W525-8,L2611-07,2026-12-01T08:00:00.000Z,2026-12-01T08:05:00.000Z,2,fail,pass,,41.25,5.8,0.42,87.1,1.2,-62.5,0,0,')
    expect(lines[2]).toBe('AB12-000124,W525-8,L2611-07,2026-12-01T08:00:00.000Z,2026-12-01T08:05:00.000Z,1,fail,fail,polarity fsHz,,5.8,0.42,87.1,1.2,-62.5,2,0,')
    expect(lines).toHaveLength(3)
  })

  it('keeps the columns it had before the retest verdict in place, and adds the retests and their reasons after them', () => {
    expect(CSV_COLUMNS.slice(0, 16)).toEqual([
      'serial', 'product', 'lot', 'first_test_at', 'last_test_at', 'tests', 'first_verdict', 'final_verdict', 'failed_checks',
      'fs_hz', 're20_ohm', 'qts', 'sensitivity_db', 'thd_max_pct', 'rub_buzz_db', 'returns',
    ])
    const csv = lotUnitsCsv([{ ...base, tests: 3, firstVerdict: 'retest', finalVerdict: 'retest', retests: 3, retestReasons: ['transient', 'hum', 'hum'] }])
    expect(csv.split('\r\n')[1]).toBe('AB12-000123,W525-8,L2611-07,2026-12-01T08:00:00.000Z,2026-12-01T08:05:00.000Z,3,retest,retest,,41.25,5.8,0.42,87.1,1.2,-62.5,0,3,transient hum hum')
  })

  it('neutralises formula starts in text cells and quotes commas, quotes and line breaks (RFC 4180)', () => {
    const evil = { ...base, serial: '=HYPERLINK("http://x.test","y")', product: '@SUM(1)', lot: 'L,1\n"2"' }
    const csv = lotUnitsCsv([evil])
    const row = csv.split('\r\n').slice(1).join('\r\n')
    expect(row.startsWith(`"'=HYPERLINK(""http://x.test"",""y"")",'@SUM(1),"L,1\n""2""",`)).toBe(true)
    // Read back, every cell is the guarded text.
    const parsed = Papa.parse<Record<string, string>>(csv, { header: true })
    expect(parsed.data[0]).toMatchObject({ serial: `'=HYPERLINK("http://x.test","y")`, product: "'@SUM(1)", lot: 'L,1\n"2"' })
  })
})
