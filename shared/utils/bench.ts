import { z } from 'zod'

/** A serial as printed on the label or read by a scanner: letters, digits and - _ . ; 3 to 64 characters. */
export const serialSchema = z
  .string({ error: 'serial is required' })
  .trim()
  .min(3, 'serial must have at least 3 characters')
  .max(64, 'serial may have at most 64 characters')
  .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'serial may hold letters, digits and - _ . only')

export const codeSchema = z
  .string()
  .trim()
  .min(1)
  .max(40)
  .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'codes may hold letters, digits and - _ . only')

const AMBIENT_RANGE = 'Room temperature (ambientC) must be between -20 and 60 °C'

/**
 * Room temperature in °C as a form or a station sends it: a decimal point or a decimal comma
 * ("22.5", "22,5"); empty means not given. Anything else is refused in words, not as NaN.
 */
export const ambientCSchema = z.preprocess(
  (v) => {
    if (typeof v !== 'string') return v
    const s = v.trim()
    if (s === '') return undefined
    return /^[+-]?\d+,\d+$/.test(s) ? s.replace(',', '.') : s
  },
  z.coerce
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
  station: z.coerce.number().int().positive().optional(),
  ambientC: ambientCSchema,
  note: z.string().trim().max(500).optional(),
})
export type UploadFields = z.infer<typeof uploadFieldsSchema>

export const RECORDING_STATUSES = ['queued', 'analysing', 'done', 'rejected', 'failed'] as const
export type RecordingStatus = (typeof RECORDING_STATUSES)[number]
export type Verdict = 'pass' | 'fail'

export const idParamSchema = z.object({ id: z.coerce.number().int().positive() })
export const serialParamSchema = z.object({ serial: serialSchema })

export const recentQuerySchema = z.object({
  station: z.coerce.number().int().positive().optional(),
  limit: z.coerce.number().int().min(1).max(200).default(20),
})

export const curvesQuerySchema = z.object({ include: z.enum(['curves']).optional() })

/** POST /api/stations and PATCH /api/stations/:id (the profile itself is checked by the engine's schema on the server). */
export const stationCreateSchema = z.object({
  name: z.string().trim().min(1, 'name is required').max(80),
  line: z.string().trim().max(80).default(''),
  profile: z.record(z.string(), z.unknown()).default({}),
})
export const stationPatchSchema = z
  .object({
    name: z.string().trim().min(1).max(80).optional(),
    line: z.string().trim().max(80).optional(),
    active: z.boolean().optional(),
    profile: z.record(z.string(), z.unknown()).optional(),
  })
  .refine((p) => Object.keys(p).length > 0, { message: 'nothing to change' })
