import { z } from 'zod'
import { decimalNumber, plainText } from './input'
import { codeSchema, serialSchema } from './ids'

const AMBIENT_RANGE = 'Room temperature (ambientC) must be between -20 and 60 °C'

/**
 * Room temperature in °C as a form or a station sends it: a decimal point or a decimal comma
 * ("22.5", "22,5"); empty means not given. Anything else ("0x10", "1e3", "Infinity") is refused
 * in words, not read as JavaScript would read it.
 */
export const ambientCSchema = decimalNumber(
  z
    .number({ error: 'Room temperature (ambientC) must be a number of °C, such as 22.5' })
    .min(-20, AMBIENT_RANGE)
    .max(60, AMBIENT_RANGE)
    .optional(),
)

/** The text fields of POST /api/recordings (multipart); numbers arrive as strings. */
export const uploadFieldsSchema = z.object({
  serial: serialSchema,
  product: codeSchema.optional(),
  lot: codeSchema.optional(),
  station: decimalNumber(z.number().int().positive().optional()),
  ambientC: ambientCSchema,
  note: plainText().trim().max(500).optional(),
})
export type UploadFields = z.infer<typeof uploadFieldsSchema>

export const RECORDING_STATUSES = ['queued', 'analysing', 'done', 'rejected', 'failed'] as const
export type RecordingStatus = (typeof RECORDING_STATUSES)[number]

/** What a recording was made for: a production test, a return test, or a station check (a reference unit measured again). */
export const RECORDING_PURPOSES = ['production', 'return_test', 'station_check'] as const
export type RecordingPurpose = (typeof RECORDING_PURPOSES)[number]

export const recentQuerySchema = z.object({
  station: decimalNumber(z.number().int().positive().optional()),
  limit: decimalNumber(z.number().int().min(1).max(200).default(20)),
})

export const curvesQuerySchema = z.object({ include: z.enum(['curves']).optional() })
