/**
 * Property-based check of the impedance-table parser (fast-check): generated tables (numbers in
 * every notation, each separator, headers, comments, blank lines, BOM, line endings) and mutated
 * ones (NaN, Infinity, huge and negative numbers, junk, cut lines, random text). Every input is
 * parsed, satisfying what the analysis relies on, or refused with AnalysisInputError and a known
 * code; nothing else may escape.
 */
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { ANALYSIS_ERROR_CODES, AnalysisInputError, MAX_TABLE_LINES, MAX_TABLE_POINTS, MIN_TABLE_POINTS, analyzeImpedanceTable, parseImpedanceTable } from '../../server/analysis/index'

const RUNS = 10_000
/** Whole-table analyses (the fit) are slower: fewer runs, the same rule. */
const ANALYSIS_RUNS = 2000
const TIME_LIMIT_MS = 40_000
const KNOWN_CODES = new Set<string>(ANALYSIS_ERROR_CODES)

const SEPARATORS = [',', '\t', ' ', '  ', ';', ', ', ' ; ']
const ODD_NUMBERS = ['NaN', 'Infinity', '-Infinity', '1e309', '-1e309', '1e-400', '-0', '0', '+5', '.5', '5.', '1e', 'e5', '0x10', '1_000', '١٢', '∞', '', '-', '1,5', '1.5.5', ' 7 ']

/** A number written the ways instruments and spreadsheets write them. */
const numberText = (decimalComma: boolean) =>
  fc.oneof(
    { weight: 8, arbitrary: fc.double({ min: -1e6, max: 1e6, noNaN: true }).map((v) => (decimalComma ? String(v).replace('.', ',') : String(v))) },
    { weight: 2, arbitrary: fc.double().map(String) },
    { weight: 1, arbitrary: fc.constantFrom(...ODD_NUMBERS) },
    { weight: 1, arbitrary: fc.double({ min: 0, max: 1e4, noNaN: true }).map((v) => v.toExponential(3)) },
  )

/** Tables close to valid: rising frequencies, some lines broken. */
const nearTable = fc
  .record({
    points: fc.integer({ min: 0, max: 80 }),
    sep: fc.constantFrom(...SEPARATORS),
    phase: fc.boolean(),
    header: fc.option(fc.constantFrom('Freq(Hz),Mag(Ohm),Phase(deg)', 'f Hz  |Z| ohm', 'frequency;impedance', 'Hz Ohm Deg'), { nil: undefined }),
    eol: fc.constantFrom('\n', '\r\n', '\r'),
    bom: fc.boolean(),
    startHz: fc.double({ min: 0.001, max: 1000, noNaN: true }),
    ratio: fc.double({ min: 0.9, max: 1.3, noNaN: true }),
    breaks: fc.array(fc.record({ line: fc.nat(), text: fc.oneof(numberText(false), fc.string({ maxLength: 20 }), fc.constantFrom('# note', '! x', '', '   ', '1 2 3 4', '5', 'NaN,NaN')) }), { maxLength: 4 }),
  })
  .map((t) => {
    const lines: string[] = []
    if (t.header) lines.push(t.header)
    let f = t.startHz
    const decimalComma = t.sep.includes(';')
    for (let i = 0; i < t.points; i++) {
      const mag = 6 + 20 / (1 + ((f - 50) / 10) ** 2)
      const fields = [f, mag, ...(t.phase ? [Math.atan((50 - f) / 10) * 57.3] : [])].map((v) => (decimalComma ? String(v).replace('.', ',') : String(v)))
      lines.push(fields.join(t.sep))
      f *= t.ratio
    }
    for (const b of t.breaks) lines.splice(lines.length ? b.line % (lines.length + 1) : 0, 0, b.text)
    return (t.bom ? '\uFEFF' : '') + lines.join(t.eol)
  })

/** Lines of arbitrary fields: odd numbers, separators and text. */
const wildTable = fc.array(
  fc.oneof(
    fc.tuple(fc.boolean(), fc.integer({ min: 1, max: 4 }), fc.constantFrom(...SEPARATORS)).chain(([dc, n, sep]) => fc.array(numberText(dc), { minLength: n, maxLength: n }).map((f) => f.join(sep))),
    fc.string({ maxLength: 40 }),
    fc.string({ unit: 'grapheme', maxLength: 20 }),
  ),
  { maxLength: 60 },
).map((lines) => lines.join('\n'))

/** A table cut or spliced at a random place (a file copied off a station half-way). */
const mutatedTable = fc.tuple(nearTable, fc.nat(), fc.nat(), fc.string({ maxLength: 12 })).map(([t, a, b, junk]) => {
  const i = t.length ? a % t.length : 0
  const j = t.length ? b % t.length : 0
  return t.slice(0, Math.min(i, j)) + junk + t.slice(Math.max(i, j))
})

const anyTable = fc.oneof({ weight: 4, arbitrary: nearTable }, { weight: 3, arbitrary: wildTable }, { weight: 2, arbitrary: mutatedTable }, { weight: 1, arbitrary: fc.string({ maxLength: 300 }) })

function parseOrRefuse(text: string): string {
  try {
    const t = parseImpedanceTable(text)
    // What the analysis relies on (the table rules of parseImpedanceTable): enough points, finite, rising, non-negative.
    expect(t.freqHz.length).toBeGreaterThanOrEqual(MIN_TABLE_POINTS)
    expect(t.magOhm).toHaveLength(t.freqHz.length)
    expect(t.lines).toHaveLength(t.freqHz.length)
    if (t.phaseDeg) expect(t.phaseDeg).toHaveLength(t.freqHz.length)
    t.freqHz.forEach((f, i) => {
      expect(Number.isFinite(f) && f > 0).toBe(true)
      if (i) expect(f).toBeGreaterThan(t.freqHz[i - 1]!)
      expect(Number.isFinite(t.magOhm[i]!) && t.magOhm[i]! >= 0).toBe(true)
      if (t.phaseDeg) expect(Number.isFinite(t.phaseDeg[i]!)).toBe(true)
    })
    return 'parsed'
  } catch (err) {
    if (err instanceof AnalysisInputError && KNOWN_CODES.has(err.code)) return err.code
    throw err
  }
}

describe('impedance-table parser: every input is parsed or refused with a typed error', () => {
  it(`generated and mutated tables (${RUNS} runs)`, () => {
    const outcomes = new Map<string, number>()
    let runs = 0
    fc.assert(
      fc.property(anyTable, (text) => {
        runs++
        const out = parseOrRefuse(text)
        outcomes.set(out, (outcomes.get(out) ?? 0) + 1)
      }),
      { numRuns: RUNS, interruptAfterTimeLimit: TIME_LIMIT_MS, markInterruptAsFailure: true, seed: 8_3001 },
    )
    expect(runs).toBeGreaterThanOrEqual(RUNS)
    for (const code of ['parsed', 'table_unparsable', 'table_too_few_points', 'table_not_increasing', 'table_negative_magnitude']) expect(outcomes.get(code) ?? 0).toBeGreaterThan(0)
  }, 60_000)

  it(`whole analysis of near-valid tables: a result or a typed refusal (${ANALYSIS_RUNS} runs)`, () => {
    let analysed = 0
    fc.assert(
      fc.property(nearTable, fc.option(fc.double({ min: -40, max: 120, noNaN: true }), { nil: undefined }), (text, ambientC) => {
        try {
          const r = analyzeImpedanceTable(text, { ambientC })
          analysed++
          expect(r.kind).toBe('impedance_table')
        } catch (err) {
          if (!(err instanceof AnalysisInputError && KNOWN_CODES.has(err.code))) throw err
        }
      }),
      { numRuns: ANALYSIS_RUNS, interruptAfterTimeLimit: TIME_LIMIT_MS, markInterruptAsFailure: true, seed: 8_3002 },
    )
    expect(analysed).toBeGreaterThan(0)
  }, 60_000)

  it('reads a table up to MAX_TABLE_POINTS points, and refuses one point more rather than guess', () => {
    const table = (n: number) => Array.from({ length: n }, (_, i) => `${(10 + i * 1.5).toFixed(1)},${(6 + (i % 7) * 0.01).toFixed(2)}`).join('\n')
    const t = parseImpedanceTable(table(MAX_TABLE_POINTS))
    expect(t.freqHz).toHaveLength(MAX_TABLE_POINTS)
    expect(t.freqHz[MAX_TABLE_POINTS - 1]).toBeCloseTo(10 + (MAX_TABLE_POINTS - 1) * 1.5, 6)
    expect(refusalCode(table(MAX_TABLE_POINTS + 1))).toBe('table_too_many_points')
    // 100 000 lines, most of them comments: refused by its length, whatever the lines hold.
    expect(refusalCode(table(50) + '\n' + '# more\n'.repeat(100_000))).toBe('table_too_many_points')
    // A final line break after the last allowed line is not one line too many.
    expect(() => parseImpedanceTable('# c\n'.repeat(MAX_TABLE_LINES - 50) + table(50) + '\n')).not.toThrow()
  })

  // Physically impossible tables are refused at upload, naming the line (our limits: see the parser).
  it.each([
    ['a magnitude of 1e39 Ω', (i: number) => `${20 + i},${i === 5 ? '1e39' : '7.5'}`, 6],
    ['a frequency of 1 GHz', (i: number) => `${i === 29 ? 1e9 : 20 + i},7.5`, 30],
    ['a frequency below 1 Hz', (i: number) => `${0.5 + i},7.5`, 1],
    ['a phase of 400°', (i: number) => `${20 + i},7.5,${i === 3 ? 400 : 10}`, 4],
  ])('refuses %s with table_out_of_range', (_, line, lineNo) => {
    const text = Array.from({ length: 30 }, (_, i) => line(i)).join('\n')
    expect(refusalCode(text)).toBe('table_out_of_range')
    expect(() => parseImpedanceTable(text)).toThrow(new RegExp(`^Line ${lineNo}:`))
  })

  it('refuses repeated and falling frequencies', () => {
    const rows = Array.from({ length: 30 }, (_, i) => [20 + i, 7.5])
    rows[10]![0] = rows[9]![0]!
    expect(refusalCode(rows.map((r) => r.join(',')).join('\n'))).toBe('table_not_increasing')
  })
})

function refusalCode(text: string): string | undefined {
  try {
    parseImpedanceTable(text)
    return undefined
  } catch (err) {
    return err instanceof AnalysisInputError ? err.code : 'other'
  }
}
