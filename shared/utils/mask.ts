import { z } from 'zod'
import { decimalNumber, plainText } from './input'

/** Names of the scalar figures a mask can limit (result parameter names). */
export const SCALAR_LIMIT_NAMES = ['re20Ohm', 'fsHz', 'qts', 'sensitivityDb', 'thdMaxPct', 'rubBuzzDb'] as const
export type ScalarLimitName = (typeof SCALAR_LIMIT_NAMES)[number]

const bound = z.number().finite().nullable()
const thdBandSchema = z
  .tuple([z.number().positive(), z.number().positive()])
  .refine(([lo, hi]) => lo < hi, { message: 'the THD band must go from low to high' })

export const scalarLimitSchema = z.object({ low: bound, high: bound }).refine((l) => l.low === null || l.high === null || l.low <= l.high, {
  message: 'low must not exceed high',
})

/** Most breakpoints a limit curve may have (the standard grid has about 240 from 10 Hz to 20 kHz). */
export const MAX_BREAKPOINTS = 2000

export const curveLimitSchema = z
  .object({
    freqHz: z.array(z.number().positive()).min(2).max(MAX_BREAKPOINTS),
    low: z.array(z.number().finite().nullable()).max(MAX_BREAKPOINTS),
    high: z.array(z.number().finite().nullable()).max(MAX_BREAKPOINTS),
  })
  .refine((c) => c.low.length === c.freqHz.length && c.high.length === c.freqHz.length, { message: 'one low and one high per frequency' })
  .refine((c) => c.freqHz.every((f, i) => i === 0 || f > c.freqHz[i - 1]!), { message: 'breakpoint frequencies must rise', path: ['freqHz'] })
  .refine((c) => c.low.every((l, i) => l === null || c.high[i] == null || l <= c.high[i]!), { message: 'a low limit above its high limit', path: ['low'] })

/** The limits a mask holds; stored as JSON in masks.limits. */
export const maskLimitsSchema = z.object({
  scalars: z.partialRecord(z.enum(SCALAR_LIMIT_NAMES), scalarLimitSchema).default({}),
  /** Polarity must read normal (a wrong lead connection inverts it). */
  polarityNormal: z.boolean().default(true),
  /** IEC 60268-5: the impedance minimum above Fs must not fall below 80 % of the rated impedance. A fixed check: always on. */
  ratedImpedanceRule: z.literal(true, { error: 'the rated-impedance rule (IEC 60268-5) is a fixed check' }).default(true),
  curves: z
    .object({ splDb: curveLimitSchema.optional(), impedanceOhm: curveLimitSchema.optional() })
    .default({}),
  /** The band the THD maximum is read in; null: the whole measured band. */
  thdBandHz: thdBandSchema.nullable().default(null),
})
export type MaskLimits = z.infer<typeof maskLimitsSchema>
/** Limits as a caller may give them (defaults filled in by the schema). */
export type MaskLimitsInput = z.input<typeof maskLimitsSchema>

/** What a figure reads for a result: the numbers a mask limits, from its parameters (and its THD curve for a THD band). */
export interface FigureSource {
  parameters: Partial<Record<ScalarLimitName | 'reOhm', number | null>>
  curves?: { freqHz: readonly number[]; thdPct?: readonly (number | null)[] | null }
}

/**
 * The value of a limited figure. Without an ambient temperature Re cannot be referred to 20 °C, so
 * the raw Re stands in; with a THD band, the THD maximum is taken inside it from the THD curve.
 * The judge and the mask proposal read figures through this one function.
 */
export function figureValue(r: FigureSource, name: ScalarLimitName, thdBandHz?: readonly [number, number] | null): number | null {
  if (name === 're20Ohm') return r.parameters.re20Ohm ?? r.parameters.reOhm ?? null
  const thd = r.curves?.thdPct
  if (name === 'thdMaxPct' && thdBandHz && thd && r.curves) {
    let max: number | null = null
    r.curves.freqHz.forEach((f, i) => {
      const v = thd[i]
      if (v != null && f >= thdBandHz[0] && f <= thdBandHz[1] && (max === null || v > max)) max = v
    })
    return max
  }
  return r.parameters[name] ?? null
}

/** Labels and units of the checks, as the bench shows them. */
export const CHECK_LABELS: Record<string, { label: string; unit: string; plain: string }> = {
  coil: { label: 'Voice coil', unit: '', plain: 'Open or shorted voice coil' },
  resonance: { label: 'Resonance', unit: '', plain: 'No resonance: blocked cone, or no driver connected' },
  polarity: { label: 'Polarity', unit: '', plain: 'Inverted polarity: leads swapped?' },
  ratedImpedance: { label: 'Impedance minimum', unit: 'Ω', plain: 'Impedance minimum below 80 % of rated' },
  re20Ohm: { label: 'Re (20 °C)', unit: 'Ω', plain: 'DC resistance out of limits' },
  fsHz: { label: 'Fs', unit: 'Hz', plain: 'Resonance frequency out of limits' },
  qts: { label: 'Qts', unit: '', plain: 'Total Q out of limits' },
  sensitivityDb: { label: 'Sensitivity', unit: 'dB', plain: 'Sensitivity out of limits' },
  thdMaxPct: { label: 'THD (max)', unit: '%', plain: 'Distortion too high' },
  rubBuzzDb: { label: 'Rub and buzz', unit: 'dB', plain: 'Rub and buzz: coil rubbing or loose parts' },
  splDb: { label: 'Response', unit: 'dB', plain: 'Frequency response outside the mask' },
  impedanceOhm: { label: 'Impedance curve', unit: 'Ω', plain: 'Impedance curve outside the mask' },
}

/**
 * A limit curve's value at f, interpolated linearly in log frequency between its breakpoints; null
 * outside the curve's range or where the limit is open. The judge and the charts use the same one.
 */
export function limitAtHz(freqHz: number[], values: (number | null)[], f: number): number | null {
  if (freqHz.length < 2 || f < freqHz[0]! || f > freqHz[freqHz.length - 1]!) return null
  let i = 1
  while (i < freqHz.length - 1 && freqHz[i]! < f) i++
  const f0 = freqHz[i - 1]!
  const f1 = freqHz[i]!
  const v0 = values[i - 1]
  const v1 = values[i]
  if (v0 == null || v1 == null) return f === f1 ? (v1 ?? null) : f === f0 ? (v0 ?? null) : null
  const t = f1 === f0 ? 0 : Math.log(f / f0) / Math.log(f1 / f0)
  return v0 + t * (v1 - v0)
}

export const MASK_STATUSES = ['draft', 'released', 'retired'] as const
export type MaskStatus = (typeof MASK_STATUSES)[number]

const productCode = z.string().trim().min(1).max(40).regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'codes may hold letters, digits and - _ . only')
const goldenSerial = z.string().trim().min(3).max(64).regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'serial may hold letters, digits and - _ . only')

const bandSideSchema = z.object({ k: z.number().positive().max(10).optional(), floorDb: z.number().min(0).max(20).optional() })
const marginRegionSchema = z
  .object({ fromHz: z.number().positive(), toHz: z.number().positive(), upperDb: z.number().min(0).max(30).optional(), lowerDb: z.number().min(0).max(30).optional() })
  .refine((r) => r.fromHz < r.toHz, { message: 'fromHz must be below toHz', path: ['toHz'] })

/** POST /api/masks: a draft proposed from golden units. */
export const maskCreateSchema = z
  .object({
    product: productCode,
    goldenSerials: z.array(goldenSerial).min(5, 'pick at least 5 golden units').max(500),
    k: z.number().positive().max(10).optional(),
    floorDb: z.number().min(0).max(20).optional(),
    fromHz: z.number().positive().optional(),
    toHz: z.number().positive().optional(),
    name: plainText().trim().max(80).optional(),
    /** The response band's sides may differ: their own k and floor (dB). */
    upper: bandSideSchema.optional(),
    lower: bandSideSchema.optional(),
    /** Extra margin (dB) in regions the engineer marks, e.g. near cone break-up. */
    regions: z.array(marginRegionSchema).max(20).optional(),
    /** Propose an impedance-curve band too (off by default). */
    impedanceCurve: z.boolean().optional(),
    /** Band for the THD maximum, Hz (default: the whole measured band). */
    thdBandHz: thdBandSchema.optional(),
  })
  .refine((m) => new Set(m.goldenSerials).size === m.goldenSerials.length, { message: 'each golden unit once', path: ['goldenSerials'] })
  .refine((m) => m.fromHz === undefined || m.toHz === undefined || m.fromHz < m.toHz, { message: 'fromHz must be below toHz', path: ['toHz'] })
export type MaskCreateInput = z.infer<typeof maskCreateSchema>

/** PATCH /api/masks/:id: edits a draft (a released mask answers 409). */
export const maskPatchSchema = z
  .object({ name: plainText().trim().max(80).optional(), limits: maskLimitsSchema.optional() })
  .refine((p) => p.name !== undefined || p.limits !== undefined, { message: 'nothing to change' })

/** POST /api/masks/:id/release and /retire: why (required for release, written to the audit log). */
export const maskReleaseSchema = z.object({ comment: plainText().trim().min(3, 'say why (at least 3 characters)').max(1000) })
export const maskRetireSchema = z.object({ comment: plainText().trim().max(1000).optional() })

export const maskListQuerySchema = z.object({ product: productCode.optional() })
export const previewQuerySchema = z.object({ last: decimalNumber(z.number().int().min(1).max(20000).default(2000)) })
export const candidatesQuerySchema = z.object({ product: productCode, limit: decimalNumber(z.number().int().min(1).max(2000).default(200)) })
