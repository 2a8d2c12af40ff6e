import { z } from 'zod'
import { plainText } from './input'
import { codeSchema } from './ids'
import { coilSchema, DEFAULT_RE_WARN_PCT } from './coil'
import type { ProductView } from '../types/api'
import { DEFAULT_RETEST_LIMIT, RETEST_LIMIT_MAX, RETEST_LIMIT_MIN } from './verdict'
import { DEFAULT_FALSE_REJECT_MAX_PCT, limitFloorsSchema } from './mask'

/** Above this estimated false-reject share, %, a release asks twice (0.01–50 %). */
const falseRejectMaxPctSchema = z
  .number({ error: 'the false-reject threshold is a number (%)' })
  .min(0.01, 'the false-reject threshold is at least 0.01 %')
  .max(50, 'the false-reject threshold is at most 50 %')

/** Rated impedance bounds: the column holds 6 digits with 2 decimals; real drivers sit between 1 and 600 Ω. */
const ratedImpedanceSchema = z
  .number({ error: 'rated impedance (Ω) is required' })
  .min(0.5, 'rated impedance must be at least 0.5 Ω')
  .max(1000, 'rated impedance may be at most 1000 Ω')

/** The band over which sensitivity is averaged, [low, high] in Hz. */
const sensitivityBandSchema = z
  .tuple([z.number().positive('the band starts above 0 Hz'), z.number().max(40000, 'the band ends at 40 kHz at most')])
  .refine(([low, high]) => low < high, { message: 'the low end of the band must be below the high end' })

const nameSchema = plainText({ error: 'name is required' }).trim().min(1, 'name is required').max(120, 'name may have at most 120 characters')
const nominalSizeSchema = plainText().trim().max(20, 'nominal size may have at most 20 characters')
/** How far the golden units' mean Re may stray from the coil's expected Re before a warning, %. */
const reWarnPctSchema = z.number().min(1, 'the Re warning is at least 1 %').max(50, 'the Re warning is at most 50 %')

/** After this many retests in a row a unit needs review (whole number, RETEST_LIMIT_MIN to RETEST_LIMIT_MAX). */
const retestLimitSchema = z
  .number({ error: 'the retest limit is a whole number' })
  .int('the retest limit is a whole number')
  .min(RETEST_LIMIT_MIN, `the retest limit is at least ${RETEST_LIMIT_MIN}`)
  .max(RETEST_LIMIT_MAX, `the retest limit is at most ${RETEST_LIMIT_MAX}`)

/** POST /api/products and the Products page's form. */
export const productCreateSchema = z.object({
  code: codeSchema,
  name: nameSchema,
  ratedImpedanceOhm: ratedImpedanceSchema,
  nominalSize: nominalSizeSchema.optional(),
  sensitivityBandHz: sensitivityBandSchema.optional(),
  coil: coilSchema.nullable().optional(),
  reWarnPct: reWarnPctSchema.default(DEFAULT_RE_WARN_PCT),
  retestLimit: retestLimitSchema.default(DEFAULT_RETEST_LIMIT),
  limitFloors: limitFloorsSchema.optional(),
  falseRejectMaxPct: falseRejectMaxPctSchema.default(DEFAULT_FALSE_REJECT_MAX_PCT),
})
export type ProductCreateInput = z.input<typeof productCreateSchema>
export type ProductCreate = z.output<typeof productCreateSchema>

/**
 * PATCH /api/products/:code. Code and rated impedance may change only while no unit of the
 * product exists (the route answers 409 product_in_use); coil null removes the description.
 */
export const productPatchSchema = z
  .object({
    code: codeSchema.optional(),
    name: nameSchema.optional(),
    ratedImpedanceOhm: ratedImpedanceSchema.optional(),
    nominalSize: nominalSizeSchema.optional(),
    sensitivityBandHz: sensitivityBandSchema.optional(),
    coil: coilSchema.nullable().optional(),
    reWarnPct: reWarnPctSchema.optional(),
    retestLimit: retestLimitSchema.optional(),
    limitFloors: limitFloorsSchema.optional(),
    falseRejectMaxPct: falseRejectMaxPctSchema.optional(),
  })
  .refine((p) => Object.values(p).some((v) => v !== undefined), { message: 'nothing to change' })
export type ProductPatchInput = z.input<typeof productPatchSchema>
export type ProductPatch = z.output<typeof productPatchSchema>

export const productCodeParamSchema = z.object({ code: codeSchema })

/** GET /api/products: each product with the version number of its active mask. */
export type ProductListItem = ProductView & { activeMaskVersion: number | null }
