import { z } from 'zod'
import { plainText } from './input'

/** Shortest text the unit search takes (one character would list a whole factory). */
export const SEARCH_MIN_CHARS = 2
/** Longest serial (the upload's rule, shared/utils/ids.ts serialSchema). */
export const SEARCH_MAX_CHARS = 64
/** Prefix matches listed at most (newest first); the answer says when there are more. */
export const SEARCH_LIST_LIMIT = 50
/** Nearest matches shown for a serial never tested here. */
export const NEAREST_LIMIT = 5
/** Roles that may download or e-mail a unit's test certificate (admin passes every rule). */
export const CERTIFICATE_ROLES = ['support', 'quality', 'engineer'] as const
export const MAX_CERTIFICATE_RECIPIENTS = 20

const SERIAL_CHARS = /^[A-Za-z0-9._-]+$/
// eslint-disable-next-line no-control-regex
const CONTROL = /[\u0000-\u001f\u007f-\u009f\u200b-\u200d\u2060\ufeff]/g
/** AIM symbology identifier some scanners put first: "]" + code letter + modifier, e.g. "]C0" (Code 128). */
const AIM_ID = /^\][A-Za-z][0-9A-Za-z]/

/**
 * What a person typed or a scanner sent, reduced to the serial it names: control characters
 * (a scanner's CR, LF, tab, GS) and surrounding spaces removed, an AIM symbology identifier
 * dropped, and start/stop characters a scanner may pass through (e.g. "*" around Code 39) cut from
 * the ends. Returns null when what is left cannot be a serial (empty, or another character inside).
 */
export function normalizeSerialQuery(raw: string): string | null {
  let s = raw.replace(CONTROL, '').trim()
  s = s.replace(AIM_ID, '')
  s = s.replace(/^[^A-Za-z0-9]+/, '').replace(/[^A-Za-z0-9._-]+$/, '')
  return s && SERIAL_CHARS.test(s) ? s : null
}

/** GET /api/units?q= : a full serial, a prefix or a scanned barcode. */
export const unitSearchQuerySchema = z.object({
  q: z
    .string({ error: 'q is required: a serial, the start of one, or a scanned barcode' })
    .max(200, 'q is too long to be a serial')
    .transform((raw, ctx) => {
      const q = normalizeSerialQuery(raw)
      if (q === null) {
        ctx.addIssue({ code: 'custom', message: 'A serial holds letters, digits and - _ . only' })
        return z.NEVER
      }
      if (q.length < SEARCH_MIN_CHARS) {
        ctx.addIssue({ code: 'custom', message: `Type at least ${SEARCH_MIN_CHARS} characters of the serial` })
        return z.NEVER
      }
      if (q.length > SEARCH_MAX_CHARS) {
        ctx.addIssue({ code: 'custom', message: `A serial has at most ${SEARCH_MAX_CHARS} characters` })
        return z.NEVER
      }
      return q
    }),
})

const email = z
  .string()
  .trim()
  .toLowerCase()
  .max(254, 'An e-mail address has at most 254 characters')
  .pipe(z.email({ error: (iss) => `Not an e-mail address: ${String(iss.input)}` }))

/** POST /api/units/:serial/certificate/send and its form: one address or a list. */
export const sendCertificateSchema = z.object({
  to: z
    .union([email.transform((a) => [a]), z.array(email).min(1, 'Name at least one recipient').max(MAX_CERTIFICATE_RECIPIENTS, `At most ${MAX_CERTIFICATE_RECIPIENTS} recipients`)])
    .transform((list) => [...new Set(list)]),
  message: plainText().trim().max(4000).optional(),
})
export type SendCertificateInput = z.output<typeof sendCertificateSchema>

/**
 * Edit distance between two strings: insertions, deletions, substitutions and swaps of two
 * neighbouring characters each count 1 (the "optimal string alignment" variant of the
 * Damerau–Levenshtein distance, Damerau 1964): the mistakes people make typing a serial.
 */
export function editDistance(a: string, b: string): number {
  const m = a.length
  const n = b.length
  if (m === 0) return n
  if (n === 0) return m
  let prev2 = new Array<number>(n + 1).fill(0)
  let prev = Array.from({ length: n + 1 }, (_, j) => j)
  let cur = new Array<number>(n + 1).fill(0)
  for (let i = 1; i <= m; i++) {
    cur[0] = i
    for (let j = 1; j <= n; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1
      let d = Math.min(prev[j]! + 1, cur[j - 1]! + 1, prev[j - 1]! + cost)
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) d = Math.min(d, prev2[j - 2]! + 1)
      cur[j] = d
    }
    ;[prev2, prev, cur] = [prev, cur, prev2]
  }
  return prev[n]!
}

/** Furthest a serial may be from what was typed and still be offered as a near match. */
export function nearestMaxDistance(query: string): number {
  return Math.max(2, Math.ceil(query.length / 4))
}

/**
 * The candidates nearest to a query, best first: serials ending with it (someone typed the last
 * digits) before the rest, then by edit distance (case ignored), then alphabetically. Candidates
 * further than nearestMaxDistance are left out.
 */
export function rankNearest(query: string, candidates: string[], limit = NEAREST_LIMIT): string[] {
  const q = query.toLowerCase()
  const max = nearestMaxDistance(q)
  return [...new Set(candidates)]
    .map((serial) => {
      const s = serial.toLowerCase()
      return { serial, endsWith: s.endsWith(q) && s !== q, d: editDistance(q, s) }
    })
    .filter((c) => c.endsWith || c.d <= max)
    .sort((a, b) => Number(b.endsWith) - Number(a.endsWith) || a.d - b.d || a.serial.localeCompare(b.serial))
    .slice(0, limit)
    .map((c) => c.serial)
}

/** The figures of a unit's record and certificate, in this order; `check` names the mask check that judges it. */
export const UNIT_PARAMETERS: readonly { key: string; label: string; unit: string; check?: string }[] = [
  { key: 're20Ohm', label: 'Re at 20 °C', unit: 'Ω', check: 're20Ohm' },
  { key: 'fsHz', label: 'Fs', unit: 'Hz', check: 'fsHz' },
  { key: 'qms', label: 'Qms', unit: '', check: 'qms' },
  { key: 'qes', label: 'Qes', unit: '', check: 'qes' },
  { key: 'qts', label: 'Qts', unit: '', check: 'qts' },
  { key: 'leMh', label: 'Le', unit: 'mH', check: 'leMh' },
  { key: 'sensitivityDb', label: 'Sensitivity (2.83 V, 1 m)', unit: 'dB SPL', check: 'sensitivityDb' },
  { key: 'thdMaxPct', label: 'THD (highest in band)', unit: '%', check: 'thdMaxPct' },
  { key: 'rubBuzzDb', label: 'Rub and buzz', unit: 'dB', check: 'rubBuzzDb' },
  { key: 'polarity', label: 'Polarity', unit: '', check: 'polarity' },
]

/** A number with 3 significant digits (no exponent), or a dash when there is none. */
export function figureText(v: unknown, digits = 3): string {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '–'
  if (v === 0) return '0'
  const decimals = Math.max(0, Math.min(4, digits - 1 - Math.floor(Math.log10(Math.abs(v)))))
  return v.toFixed(decimals)
}

export interface ParameterRow {
  key: string
  label: string
  unit: string
  /** The measured value as shown ("–" when not measured). */
  value: string
  /** The judging mask's bounds as shown ("–" when open or not judged). */
  low: string
  high: string
  /** The check's outcome (`undecided`: the check could not decide, no failure); null when the mask does not judge this figure. */
  outcome: CheckOutcome | null
}

/** How one check came out: inside, outside, or undecided (its figure missing, or its uncertainty straddling the limit). */
export type CheckOutcome = 'pass' | 'fail' | 'undecided'

/** A check's outcome from its stored form (a check that could not decide has pass false and undecided true). */
export function checkOutcome(c: { pass: boolean; undecided?: boolean }): CheckOutcome {
  return c.undecided ? 'undecided' : c.pass ? 'pass' : 'fail'
}

/**
 * Smallest uncertainty shown beside a figure, in the figure's unit (dB or %): a clean recording's is
 * far smaller, and "± 0.0010" beside every figure would only hide the ones noise really limits.
 */
export const UNCERTAINTY_SHOWN_FROM = 0.005

/** Whether a check's uncertainty is worth showing beside its figure. */
export function showsUncertainty(u: number | undefined): u is number {
  return u !== undefined && Number.isFinite(u) && u >= UNCERTAINTY_SHOWN_FROM
}

/**
 * A figure as read against its check: "below x" when it lies under the noise floor x (the check's
 * value), "v ± u" when noise limits it (u at 95 % coverage), otherwise the figure alone.
 */
export function figureWithUncertainty(value: string, check: { value: number | null; below?: boolean; uncertainty?: number } | undefined): string {
  if (check?.below && check.value !== null) return `below ${figureText(check.value)}`
  if (showsUncertainty(check?.uncertainty) && value !== '–') return `${value} ± ${figureText(check.uncertainty, 2)}`
  return value
}

/** One test's figures beside the limits of the mask that judged it (the unit page and the certificate show the same rows). */
export function parameterRows(
  parameters: Record<string, unknown> | null,
  flags: { polarity?: 'normal' | 'inverted' | null } | null,
  checks: { name: string; value: number | null; low: number | null; high: number | null; pass: boolean; undecided?: boolean; below?: boolean; uncertainty?: number }[],
): ParameterRow[] {
  return UNIT_PARAMETERS.map((p) => {
    const check = p.check ? checks.find((c) => c.name === p.check) : undefined
    // Without the ambient temperature Re cannot be referred to 20 °C: the raw Re is shown, and says so.
    const rawRe = p.key === 're20Ohm' && typeof parameters?.re20Ohm !== 'number' && typeof parameters?.reOhm === 'number'
    const value = p.key === 'polarity' ? (flags?.polarity ?? '–') : figureText(parameters?.[rawRe ? 'reOhm' : p.key])
    // Polarity has a required state, not bounds: "normal" stands in the low column when judged.
    const polarity = p.key === 'polarity'
    return {
      key: p.key,
      label: rawRe ? 'Re (ambient not given)' : p.label,
      unit: p.unit,
      value: polarity ? value : figureWithUncertainty(value, check),
      low: polarity ? (check ? 'normal' : '–') : figureText(check?.low),
      high: polarity ? '–' : figureText(check?.high),
      outcome: check ? checkOutcome(check) : null,
    }
  })
}
