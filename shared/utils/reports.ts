import { z } from 'zod'
import { decimalNumber, plainText } from './input'
import { codeSchema } from './ids'

/** GET /api/lots: `?product=CODE&open=true`. */
export const lotListQuerySchema = z.object({
  product: codeSchema.optional(),
  open: z.enum(['true', 'false']).transform((v) => v === 'true').optional(),
  limit: decimalNumber(z.number().int().min(1).max(1000).default(200)),
})
export type LotListQuery = z.infer<typeof lotListQuerySchema>

/** /api/lots/:code and its exports. */
export const lotParamSchema = z.object({ code: codeSchema })

/** GET /api/dashboard: `?day=YYYY-MM-DD` (UTC), today by default. */
export const dashboardQuerySchema = z.object({
  day: z.iso.date({ error: 'day must be a date as YYYY-MM-DD' }).optional(),
})

/** A failure class: a check name, with `:high` or `:low` for a side of a two-sided figure. */
export const failureClassSchema = z
  .string()
  .trim()
  .regex(/^[A-Za-z][A-Za-z0-9]{0,39}(:(high|low))?$/, 'a failure class is a check name, optionally with :high or :low')
export const causeParamSchema = z.object({ failureClass: failureClassSchema })

/** PUT /api/causes/:failureClass. */
export const causePutSchema = z.object({
  label: plainText().trim().min(1, 'label must not be empty').max(80).optional(),
  causes: z.array(plainText().trim().min(1, 'a cause must not be empty').max(200)).max(20),
})
export type CausePutInput = z.infer<typeof causePutSchema>
