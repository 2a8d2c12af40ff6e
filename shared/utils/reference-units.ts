import { z } from 'zod'
import { plainText } from './input'
import { serialSchema } from './ids'
import { SCALAR_LIMIT_NAMES, type ScalarLimitName } from './mask'

/** The figures a reference unit carries accepted values and verification limits for: the mask's scalar figures. */
export const REFERENCE_FIGURES = SCALAR_LIMIT_NAMES

/** Fewest measurements on the trusted station the accepted values may rest on (a spread needs several). */
export const MIN_REFERENCE_MEASUREMENTS = 3
/** Most measurements taken, newest first, when the engineer does not say. */
export const DEFAULT_REFERENCE_MEASUREMENTS = 10

/**
 * The default verification limit of a figure, accepted value ± the larger of
 * - `REPEAT_SD_MULTIPLIER` × the spread of the accepted measurements (a station measuring as it did
 *   then passes its check about 997 times in 1 000, normal model), and
 * - `TOLERANCE_SHARE` × the figure's tolerance width under the product's active mask (for a limit with
 *   one side, twice the distance from the accepted value to it), or, without a mask limit, of the
 *   width the product's floor gives (2 × floor around the accepted value).
 * Common practice: a station's error is acceptable while it stays within a tenth of the tolerance (the
 * "ten per cent rule" of measurement-system practice), and a check must not fail on the station's own
 * repeatability. THD and rub and buzz get no default limit: a good unit reads the station's noise
 * floor there (which differs from room to room), not its accuracy; an engineer may set one.
 */
export const REPEAT_SD_MULTIPLIER = 3
export const TOLERANCE_SHARE = 0.1

export type VerificationRule = 'repeatability' | 'tolerance_share' | 'engineer'

export interface AcceptedValue {
  value: number
  sd: number
  n: number
}

export interface VerificationLimit {
  low: number
  high: number
  /** Which term set the width (see REPEAT_SD_MULTIPLIER), or the engineer's own limit. */
  rule: VerificationRule
  /** The tolerance width the share was taken of (null when the engineer set the limit). */
  toleranceWidth: number | null
}

const limitSchema = z
  .object({ low: z.number().finite(), high: z.number().finite() })
  .refine((l) => l.low < l.high, { message: 'low must be below high' })

export const referenceRegisterSchema = z.object({
  serial: serialSchema,
  description: plainText().trim().min(1, 'say what the unit is').max(200),
  keptAt: plainText().trim().min(1, 'say where the unit is kept').max(200),
  /** The trusted station whose measurements of the unit give the accepted values. */
  station: z.number().int().positive(),
  /** How many of its latest measurements there to take. */
  measurements: z.number().int().min(MIN_REFERENCE_MEASUREMENTS).max(50).default(DEFAULT_REFERENCE_MEASUREMENTS),
  /** Verification limits the engineer sets instead of the defaults, per figure. */
  limits: z.partialRecord(z.enum(REFERENCE_FIGURES), limitSchema).default({}),
})
export type ReferenceRegisterInput = z.infer<typeof referenceRegisterSchema>

export const referenceRetireSchema = z.object({ comment: plainText().trim().min(1, 'say why the unit is retired').max(500) })

/** One figure of a station check against its verification limit. */
export interface CheckedFigure {
  value: number | null
  accepted: number
  low: number
  high: number
  /** False for a figure outside its limit, and for a figure the check could not measure. */
  pass: boolean
}

export type ReferenceFigures<T> = Partial<Record<ScalarLimitName, T>>
