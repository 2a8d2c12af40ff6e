import { z } from 'zod'

/** Names of the scalar figures a mask can limit (result parameter names). */
export const SCALAR_LIMIT_NAMES = ['re20Ohm', 'fsHz', 'qts', 'sensitivityDb', 'thdMaxPct', 'rubBuzzDb'] as const
export type ScalarLimitName = (typeof SCALAR_LIMIT_NAMES)[number]

const bound = z.number().finite().nullable()
export const scalarLimitSchema = z.object({ low: bound, high: bound }).refine((l) => l.low === null || l.high === null || l.low <= l.high, {
  message: 'low must not exceed high',
})

export const curveLimitSchema = z
  .object({
    freqHz: z.array(z.number().positive()).min(2),
    low: z.array(z.number().finite().nullable()),
    high: z.array(z.number().finite().nullable()),
  })
  .refine((c) => c.low.length === c.freqHz.length && c.high.length === c.freqHz.length, { message: 'one low and one high per frequency' })

/** The limits a mask holds; stored as JSON in masks.limits. */
export const maskLimitsSchema = z.object({
  scalars: z.partialRecord(z.enum(SCALAR_LIMIT_NAMES), scalarLimitSchema).default({}),
  /** Polarity must read normal (a wrong lead connection inverts it). */
  polarityNormal: z.boolean().default(true),
  /** IEC 60268-5: the impedance minimum above Fs must not fall below 80 % of the rated impedance. */
  ratedImpedanceRule: z.boolean().default(true),
  curves: z
    .object({ splDb: curveLimitSchema.optional(), impedanceOhm: curveLimitSchema.optional() })
    .default({}),
})
export type MaskLimits = z.infer<typeof maskLimitsSchema>

/** Labels and units of the checks, as the bench shows them. */
export const CHECK_LABELS: Record<string, { label: string; unit: string; plain: string }> = {
  coil: { label: 'Voice coil', unit: '', plain: 'Open or shorted voice coil' },
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
