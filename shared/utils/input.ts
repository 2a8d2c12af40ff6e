import { z } from 'zod'

/**
 * The two rules every text a person or a station sends goes through, whatever the route:
 * - text (`plainText`) holds no control character but tab, CR and LF: a NUL cannot be stored in
 *   PostgreSQL's text at all, and the others (BEL, ESC, DEL, the C1 range) are never typed, only
 *   injected, and would reach CSV exports, PDFs and the log unchanged;
 * - a number sent as text (`decimalNumber`: multipart fields, query strings) is a plain decimal,
 *   not whatever JavaScript's Number() reads (hexadecimal, exponents, Infinity, an empty string
 *   as 0).
 */

// eslint-disable-next-line no-control-regex
const CONTROL = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f]/
/** Read by issueText (server/utils/errors.ts) as a rule that follows the field's name. */
export const CONTROL_CHARACTER_MESSAGE = 'must not hold control characters (such as NUL or BEL); tab and line breaks are fine'

/** The first control character of `s` that text may not hold, as U+XXXX, or null. */
export function controlCharacterIn(s: string): string | null {
  const m = CONTROL.exec(s)
  return m ? `U+${m[0].charCodeAt(0).toString(16).toUpperCase().padStart(4, '0')}` : null
}

/** A text field: z.string() (same parameters) that refuses control characters other than tab, CR and LF. */
export function plainText(params?: Parameters<typeof z.string>[0]) {
  return z.string(params).refine((s) => controlCharacterIn(s) === null, { message: CONTROL_CHARACTER_MESSAGE })
}

/**
 * A decimal as people write it: an optional sign, digits, and a decimal point or a decimal comma
 * ("12", "-3.25", "12,5"). Spaces around it are dropped as a form leaves them.
 */
const DECIMAL = /^[+-]?\d+(?:[.,]\d+)?$/

/**
 * What a number field of a form or a query string holds: a number for a plain decimal, undefined
 * for an empty field (not given, never 0), and anything else unchanged so the number schema
 * refuses it ("0x10", "1e3", "Infinity" are not read as numbers). Numbers pass as they are.
 */
export function readDecimal(v: unknown): unknown {
  if (typeof v !== 'string') return v
  const s = v.trim()
  if (s === '') return undefined
  return DECIMAL.test(s) ? Number(s.replace(',', '.')) : v
}

/** A number that may arrive as text: `inner` (e.g. z.number().int().min(1)) applied to readDecimal's reading. */
export function decimalNumber<T extends z.ZodType>(inner: T) {
  return z.preprocess(readDecimal, inner)
}
