import { AnalysisInputError } from './errors.ts'

/** Fewest points accepted in an impedance table (our minimum: fewer cannot sample the resonance and its flanks for a five-parameter fit). */
export const MIN_TABLE_POINTS = 20
/**
 * Most points accepted (our limit: analysers export a few hundred to a few thousand points; the
 * analysis resamples to a 1/24-octave grid, so more adds nothing but time and memory).
 */
export const MAX_TABLE_POINTS = 10_000
/** Most lines of any kind (points, comments, blank lines) read before the table is refused. */
export const MAX_TABLE_LINES = 20_000
/** Frequencies a table may hold, Hz: a driver's impedance is measured within the audio band and a little beyond. */
export const TABLE_FREQ_RANGE_HZ: readonly [number, number] = [1, 100_000]
/** Largest magnitude accepted, Ω (an open circuit reads as very high but finite; beyond this the figure is not a measurement). */
export const TABLE_MAX_MAGNITUDE_OHM = 1_000_000
/** Phase must lie within ±180° (a passive load stays within ±90°; wrapped exports use the full circle). */
export const TABLE_MAX_PHASE_DEG = 180
const COMMENT_PREFIXES = ['#', ';', '*', '!']
const NUMBER_RE = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/

export interface ImpedanceTable {
  freqHz: number[]
  magOhm: number[]
  /** Null when the table has no phase column. */
  phaseDeg: number[] | null
  /** 1-based source line of each point. */
  lines: number[]
  header: string | null
}

function splitFields(line: string): { fields: string[]; decimalComma: boolean } {
  if (line.includes(';')) return { fields: line.split(';').map((s) => s.trim()), decimalComma: true }
  if (line.includes('\t')) return { fields: line.split('\t').map((s) => s.trim()).filter((s) => s !== ''), decimalComma: false }
  if (line.includes(',')) return { fields: line.split(',').map((s) => s.trim()), decimalComma: false }
  return { fields: line.trim().split(/\s+/), decimalComma: false }
}

function parseNumber(s: string, decimalComma: boolean): number | null {
  const t = decimalComma ? s.replace(',', '.') : s
  if (!NUMBER_RE.test(t)) return null
  const v = Number(t)
  return Number.isFinite(v) ? v : null
}

/**
 * Parses an impedance table: one point a line, frequency (Hz), magnitude (Ω), optional phase (°).
 * Separators: comma, tab, whitespace, or semicolon (then decimal commas are allowed). One optional
 * header line before the data; comment lines start with #, ;, * or !.
 * A physically impossible table is refused, never guessed at: frequencies outside
 * TABLE_FREQ_RANGE_HZ, magnitudes over TABLE_MAX_MAGNITUDE_OHM, phases beyond ±180°, repeated or
 * falling frequencies, more than MAX_TABLE_POINTS points or MAX_TABLE_LINES lines.
 * @throws AnalysisInputError naming the line for unparsable lines, non-increasing frequencies,
 *   negative magnitudes and values out of range; `table_too_few_points` below MIN_TABLE_POINTS,
 *   `table_too_many_points` above the limits.
 */
export function parseImpedanceTable(text: string): ImpedanceTable {
  // Split no further than needed to tell: one element more than the limit is the final line break's empty rest.
  const rawLines = text.replace(/^\uFEFF/, '').split(/\r\n|\r|\n/, MAX_TABLE_LINES + 2)
  if (rawLines.length > MAX_TABLE_LINES + 1 || (rawLines.length === MAX_TABLE_LINES + 1 && rawLines[MAX_TABLE_LINES]!.trim() !== '')) {
    throw new AnalysisInputError('table_too_many_points', `The table has more than ${MAX_TABLE_LINES} lines; at most ${MAX_TABLE_POINTS} points are read.`)
  }
  const freqHz: number[] = []
  const magOhm: number[] = []
  const phase: number[] = []
  const lines: number[] = []
  let header: string | null = null
  let columns: 2 | 3 | null = null
  for (let li = 0; li < rawLines.length; li++) {
    const lineNo = li + 1
    const line = rawLines[li]!.trim()
    if (line === '') continue
    if (COMMENT_PREFIXES.includes(line[0]!)) continue
    const { fields, decimalComma } = splitFields(line)
    const nums = fields.map((f) => parseNumber(f, decimalComma))
    const allNumeric = nums.every((v) => v !== null)
    if (!allNumeric) {
      if (freqHz.length === 0 && header === null && /[A-Za-z]/.test(line)) {
        header = line
        continue
      }
      throw new AnalysisInputError('table_unparsable', `Line ${lineNo}: "${line.slice(0, 60)}" is not frequency, magnitude[, phase].`, {
        line: lineNo,
      })
    }
    if (nums.length !== 2 && nums.length !== 3) {
      throw new AnalysisInputError('table_unparsable', `Line ${lineNo}: expected 2 or 3 numbers, found ${nums.length}.`, { line: lineNo })
    }
    if (columns === null) columns = nums.length as 2 | 3
    else if (nums.length !== columns) {
      throw new AnalysisInputError('table_unparsable', `Line ${lineNo}: ${nums.length} columns where earlier lines have ${columns}.`, {
        line: lineNo,
      })
    }
    const [f, m, p] = nums as number[]
    if (!(f! > 0)) {
      throw new AnalysisInputError('table_unparsable', `Line ${lineNo}: frequency ${f} Hz is not positive.`, { line: lineNo })
    }
    if (freqHz.length > 0 && !(f! > freqHz[freqHz.length - 1]!)) {
      throw new AnalysisInputError(
        'table_not_increasing',
        `Line ${lineNo}: frequency ${f} Hz does not increase (previous ${freqHz[freqHz.length - 1]} Hz).`,
        { line: lineNo },
      )
    }
    if (m! < 0) {
      throw new AnalysisInputError('table_negative_magnitude', `Line ${lineNo}: negative magnitude ${m} Ω.`, { line: lineNo })
    }
    const [fLo, fHi] = TABLE_FREQ_RANGE_HZ
    if (f! < fLo || f! > fHi) {
      throw new AnalysisInputError('table_out_of_range', `Line ${lineNo}: frequency ${f} Hz is outside ${fLo} Hz to ${fHi / 1000} kHz.`, { line: lineNo })
    }
    if (m! > TABLE_MAX_MAGNITUDE_OHM) {
      throw new AnalysisInputError('table_out_of_range', `Line ${lineNo}: magnitude ${m} Ω is over ${TABLE_MAX_MAGNITUDE_OHM / 1e6} MΩ.`, { line: lineNo })
    }
    if (columns === 3 && Math.abs(p!) > TABLE_MAX_PHASE_DEG) {
      throw new AnalysisInputError('table_out_of_range', `Line ${lineNo}: phase ${p}° is beyond ±${TABLE_MAX_PHASE_DEG}°.`, { line: lineNo })
    }
    if (freqHz.length === MAX_TABLE_POINTS) {
      throw new AnalysisInputError('table_too_many_points', `Line ${lineNo}: the table has more than ${MAX_TABLE_POINTS} points.`, { line: lineNo })
    }
    freqHz.push(f!)
    magOhm.push(m!)
    if (columns === 3) phase.push(p!)
    lines.push(lineNo)
  }
  if (freqHz.length < MIN_TABLE_POINTS) {
    throw new AnalysisInputError(
      'table_too_few_points',
      `The table has ${freqHz.length} point(s); at least ${MIN_TABLE_POINTS} are needed.`,
    )
  }
  return { freqHz, magOhm, phaseDeg: columns === 3 ? phase : null, lines, header }
}
