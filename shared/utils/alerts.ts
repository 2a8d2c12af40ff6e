import { z } from 'zod'
import { decimalNumber, plainText } from './input'
import { mailRecipientSchema } from './lot-report-mail'

/** Defaults of a product's alert rules (the migration's column defaults). */
export const ALERT_DEFAULTS = { lastN: 50, minYieldPct: 90, enabled: true } as const
export const MAX_SUBSCRIBERS = 50

/** PUT /api/products/[code]/alerting and the alerting form. */
export const alertingSchema = z.object({
  lastN: z.number().int('Whole units only').min(1, 'At least 1 unit').max(10_000),
  minYieldPct: z.number().min(0, '0 to 100 %').max(100, '0 to 100 %'),
  enabled: z.boolean(),
  subscribers: z
    .array(mailRecipientSchema)
    .max(MAX_SUBSCRIBERS, `At most ${MAX_SUBSCRIBERS} subscribers`)
    .transform((list) => [...new Set(list)]),
})
export type AlertingInput = z.infer<typeof alertingSchema>
export type AlertingView = z.output<typeof alertingSchema>

/** GET /api/alerts query. */
export const alertsQuerySchema = z.object({
  open: z.enum(['true', 'false']).optional().transform((v) => (v === undefined ? undefined : v === 'true')),
  product: plainText().trim().min(1).max(64).optional(),
  limit: decimalNumber(z.number().int().min(1).max(500).default(100)),
})
