import { z } from 'zod'
import { decimalNumber, plainText } from './input'

/** Names of the scalar figures a mask can limit (result parameter names). */
export const SCALAR_LIMIT_NAMES = ['re20Ohm', 'fsHz', 'qts', 'qms', 'qes', 'leMh', 'sensitivityDb', 'thdMaxPct', 'rubBuzzDb'] as const
export type ScalarLimitName = (typeof SCALAR_LIMIT_NAMES)[number]

/** Figures judged against an upper limit only: less distortion or less rub and buzz is never a fault. */
export const UPPER_ONLY: ReadonlySet<ScalarLimitName> = new Set(['thdMaxPct', 'rubBuzzDb'])

/**
 * How a mask decides near a limit, given the uncertainty the engine reports with a figure (ISO
 * 14253-1's idea of conformance with uncertainty):
 * - `simple`: the measured value against the limit; a value within its uncertainty of a limit is
 *   marked marginal but decides as measured;
 * - `guarded_fail`: the acceptance zone shrinks by the uncertainty: a value inside the limit but
 *   within its uncertainty of it fails;
 * - `guarded_retest`: a value within its uncertainty of a limit, on either side, cannot decide and
 *   asks to measure again.
 */
export const DECISION_RULES = ['simple', 'guarded_fail', 'guarded_retest'] as const
export type DecisionRule = (typeof DECISION_RULES)[number]
/** A new mask's rule unless the engineer chooses another: the measured value decides (most lines do this). */
export const DEFAULT_DECISION_RULE: DecisionRule = 'simple'

/** The figures and curves a floor applies to; each floor is a minimum half-width of its limit. */
export const FLOOR_NAMES = [...SCALAR_LIMIT_NAMES, 'splDb', 'impedanceOhm'] as const
export type FloorName = (typeof FLOOR_NAMES)[number]

/**
 * Default floors, the narrowest a proposed limit may be (half-width), with their unit: '%' of the
 * golden mean, or the figure's own unit. Common practice: sized on the tolerances drivers' data
 * sheets usually state (Re ±5 %, Fs ±10–15 %, Q ±10–20 %, sensitivity ±1 dB, response ±1.5–3 dB),
 * so a mask from golden units that happen to agree closely is never tighter than a data sheet.
 * THD is in percentage points and rub and buzz in dB (upper limits only); the impedance curve in %
 * of its mean |Z|.
 */
export const DEFAULT_FLOORS: Readonly<Record<FloorName, { value: number; unit: '%' | 'dB' | 'pp' }>> = Object.freeze({
  re20Ohm: { value: 5, unit: '%' },
  fsHz: { value: 10, unit: '%' },
  qts: { value: 10, unit: '%' },
  qms: { value: 15, unit: '%' },
  qes: { value: 10, unit: '%' },
  leMh: { value: 15, unit: '%' },
  sensitivityDb: { value: 1, unit: 'dB' },
  thdMaxPct: { value: 1, unit: 'pp' },
  rubBuzzDb: { value: 3, unit: 'dB' },
  splDb: { value: 1.5, unit: 'dB' },
  impedanceOhm: { value: 5, unit: '%' },
})

/** A product's floors, as stored and edited (absent names use DEFAULT_FLOORS). */
export const limitFloorsSchema = z.partialRecord(z.enum(FLOOR_NAMES), z.number().finite().min(0).max(100))
export type LimitFloors = z.infer<typeof limitFloorsSchema>

/** The floor in force for a figure: the product's own, else the default. */
export function floorOf(floors: LimitFloors | null | undefined, name: FloorName): number {
  return floors?.[name] ?? DEFAULT_FLOORS[name].value
}

/** Coverage and confidence of a new mask's tolerance intervals unless the engineer sets others. */
export const DEFAULT_COVERAGE = 0.99
export const DEFAULT_CONFIDENCE = 0.95
/** A product's false-reject share above which a release asks twice, % (default 1 %). */
export const DEFAULT_FALSE_REJECT_MAX_PCT = 1
/**
 * The golden-spread comparison's warning (server/limits/propose.ts compareSpreads, and the mask
 * page's chart): golden σ below this share of production's robust σ, over at least
 * GOLDEN_SPREAD_HISTORY_MIN production units (our choice: half).
 */
export const GOLDEN_SPREAD_WARN_RATIO = 0.5
export const GOLDEN_SPREAD_HISTORY_MIN = 30

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
  /**
   * How the mask decides near a limit. Masks made before rules existed decided as `guarded_retest`
   * does, so that stays their rule (a released mask never changes); new masks state theirs.
   */
  decisionRule: z.enum(DECISION_RULES).default('guarded_retest'),
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
  qms: { label: 'Qms', unit: '', plain: 'Mechanical Q out of limits' },
  qes: { label: 'Qes', unit: '', plain: 'Electrical Q out of limits' },
  leMh: { label: 'Le', unit: 'mH', plain: 'Voice-coil inductance out of limits' },
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
    /** A fixed multiplier of σ instead of the tolerance interval (every limit then says "k·σ"). */
    k: z.number().positive().max(10).optional(),
    /** Share of good units the whole mask should pass (tolerance-interval coverage), default 0.99. */
    coverage: z.number().min(0.5).max(0.9999).optional(),
    /** Confidence of the tolerance intervals, default 0.95. */
    confidence: z.number().min(0.5).max(0.999).optional(),
    decisionRule: z.enum(DECISION_RULES).optional(),
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
export const maskReleaseSchema = z.object({
  comment: plainText().trim().min(3, 'say why (at least 3 characters)').max(1000),
  /** The engineer saw the expected false-reject share above the product's threshold and releases anyway. */
  confirmFalseReject: z.boolean().optional(),
})
export const maskRetireSchema = z.object({ comment: plainText().trim().max(1000).optional() })

export const maskListQuerySchema = z.object({ product: productCode.optional() })
export const previewQuerySchema = z.object({ last: decimalNumber(z.number().int().min(1).max(20000).default(2000)) })
export const candidatesQuerySchema = z.object({ product: productCode, limit: decimalNumber(z.number().int().min(1).max(2000).default(200)) })
