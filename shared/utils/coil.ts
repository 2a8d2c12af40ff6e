import { z } from 'zod'

/**
 * A product's voice coil as the engineer describes it, and the DC resistance it should have at
 * 20 °C. Pure: the Products form shows the figure live, the server stores and returns it, and the
 * mask pages compare it with the golden units' mean Re.
 *
 * Copper only. Resistance of one strand R = ρ·L / A with
 *  - ρ: annealed copper at 20 °C, IEC 60028 (International Annealed Copper Standard):
 *    1/58 Ω·mm²/m = 0.017241 Ω·mm²/m;
 *  - A = π·d²/4, d the nominal bare diameter of the gauge as ASTM B258 tabulates it (below);
 *  - L the wire length, given directly or as turns × π × mean turn diameter.
 * Strands wound in parallel divide the resistance. Enamel, lead-out wires and the temperature of
 * the coil are not counted: the figure is the coil's own Re at 20 °C.
 */

/** Resistivity of annealed copper at 20 °C, Ω·mm²/m (IEC 60028: 1/58 exactly). */
export const COPPER_RESISTIVITY_20C_OHM_MM2_PER_M = 1 / 58

/** Millimetres per inch (exact, by the 1959 international yard and pound agreement). */
export const MM_PER_INCH = 25.4

/** The gauges Conetrail accepts for a voice coil (thick woofer wire to fine tweeter wire). */
export const AWG_MIN = 20
export const AWG_MAX = 40

/**
 * The AWG definition (ASTM B258): 36 AWG is 0.005 in, 0000 AWG is 0.4600 in, and 39 geometric
 * steps lie between them, so d(n) = 0.005 in × 92^((36 − n)/39) = 0.127 mm × 92^((36 − n)/39).
 * Unrounded; the table below holds the values the standard tabulates.
 */
export function awgFormulaDiameterMm(awg: number): number {
  return 0.127 * 92 ** ((36 - awg) / 39)
}

/**
 * ASTM B258 rounds the nominal diameter to the nearest 0.0001 in for 44 AWG and larger (finer
 * gauges to 0.00001 in); every size we accept is in the first group. Areas follow from the
 * rounded diameters, as in the standard's table.
 */
const B258_ROUNDING_IN = 0.0001

export interface AwgSize {
  awg: number
  /** Nominal bare diameter as ASTM B258 tabulates it, inches (rounded to 0.0001 in). */
  diameterIn: number
  /** The same in millimetres (× 25.4 exactly, not rounded again). */
  diameterMm: number
  /** Cross-section from the tabulated diameter, mm². */
  areaMm2: number
  /** Resistance of one metre at 20 °C (IEC 60028 copper), Ω/m. */
  ohmPerM: number
}

function sizeOf(awg: number): AwgSize {
  const inches = awgFormulaDiameterMm(awg) / MM_PER_INCH
  const diameterIn = Number((Math.round(inches / B258_ROUNDING_IN) * B258_ROUNDING_IN).toFixed(4))
  const diameterMm = diameterIn * MM_PER_INCH
  const areaMm2 = (Math.PI / 4) * diameterMm ** 2
  return { awg, diameterIn, diameterMm, areaMm2, ohmPerM: COPPER_RESISTIVITY_20C_OHM_MM2_PER_M / areaMm2 }
}

/** AWG 20 to 40, by gauge: the ASTM B258 nominal diameters computed from the definition and rounded as the standard does. */
export const AWG_TABLE: Readonly<Record<number, AwgSize>> = Object.freeze(
  Object.fromEntries(Array.from({ length: AWG_MAX - AWG_MIN + 1 }, (_, i) => [AWG_MIN + i, Object.freeze(sizeOf(AWG_MIN + i))])),
)

/** The table row of a gauge. @throws RangeError outside 20–40 AWG or for a fractional gauge. */
export function awgSize(awg: number): AwgSize {
  const size = Number.isInteger(awg) ? AWG_TABLE[awg] : undefined
  if (!size) throw new RangeError(`AWG ${awg} is outside the table (${AWG_MIN} to ${AWG_MAX})`)
  return size
}

/** Plausible bounds of a form, not physics: they catch a typo (metres for millimetres), nothing more. */
const MAX_WIRE_LENGTH_M = 2000
const MAX_TURNS = 20000
const MAX_MEAN_DIAMETER_MM = 500
const MAX_LAYERS = 16
const MAX_STRANDS = 16

/**
 * A voice-coil description: copper wire of one AWG gauge, either its length (lengthM) or its total
 * number of turns over all layers with the mean turn diameter (turns, meanDiameterMm), the number
 * of layers (descriptive: it does not change Re) and the number of strands wound in parallel.
 */
export const coilSchema = z
  .object({
    awg: z
      .number({ error: 'wire gauge (AWG) is required' })
      .int('wire gauge is a whole AWG number')
      .min(AWG_MIN, `wire gauge must be AWG ${AWG_MIN} to ${AWG_MAX}`)
      .max(AWG_MAX, `wire gauge must be AWG ${AWG_MIN} to ${AWG_MAX}`),
    lengthM: z.number().positive('wire length must be above 0 m').max(MAX_WIRE_LENGTH_M, `wire length may be at most ${MAX_WIRE_LENGTH_M} m`).optional(),
    turns: z.number().int('turns is a whole number').positive('turns must be at least 1').max(MAX_TURNS).optional(),
    meanDiameterMm: z.number().positive('mean diameter must be above 0 mm').max(MAX_MEAN_DIAMETER_MM, `mean diameter may be at most ${MAX_MEAN_DIAMETER_MM} mm`).optional(),
    layers: z.number({ error: 'layers is required' }).int('layers is a whole number').min(1, 'at least 1 layer').max(MAX_LAYERS, `at most ${MAX_LAYERS} layers`),
    strands: z.number().int('strands is a whole number').min(1, 'at least 1 strand').max(MAX_STRANDS, `at most ${MAX_STRANDS} strands`).default(1),
  })
  .superRefine((c, ctx) => {
    const byTurns = c.turns !== undefined || c.meanDiameterMm !== undefined
    if (c.lengthM !== undefined && byTurns) {
      ctx.addIssue({ code: 'custom', path: ['lengthM'], message: 'give either the wire length or turns × mean diameter, not both' })
    } else if (c.lengthM === undefined && !byTurns) {
      ctx.addIssue({ code: 'custom', path: ['lengthM'], message: 'give the wire length, or the turns and the mean diameter' })
    } else if (byTurns && c.turns === undefined) {
      ctx.addIssue({ code: 'custom', path: ['turns'], message: 'turns are needed with a mean diameter' })
    } else if (byTurns && c.meanDiameterMm === undefined) {
      ctx.addIssue({ code: 'custom', path: ['meanDiameterMm'], message: 'a mean diameter is needed with turns' })
    }
  })
/** A checked coil (strands filled in). */
export type Coil = z.infer<typeof coilSchema>
/** A coil as a client sends it (strands may be left out). */
export type CoilInput = z.input<typeof coilSchema>

/** Length of one strand, m: as given, or turns × π × mean diameter. */
export function coilWireLengthM(coil: Coil): number {
  if (coil.lengthM !== undefined) return coil.lengthM
  return (coil.turns! * Math.PI * coil.meanDiameterMm!) / 1000
}

/** The coil's DC resistance at 20 °C, Ω (see the top of this file for the sources). @throws RangeError for a gauge outside the table. */
export function expectedRe20Ohm(coil: Coil): number {
  const strands = coil.strands ?? 1
  return (awgSize(coil.awg).ohmPerM * coilWireLengthM(coil)) / strands
}

/** The expected Re of a draft that may be incomplete (a form as the engineer types): null until it is a valid coil. */
export function expectedRe20OhmOf(draft: unknown): number | null {
  const parsed = coilSchema.safeParse(draft)
  return parsed.success ? expectedRe20Ohm(parsed.data) : null
}

/** How far the golden units' mean Re at 20 °C lies from the expected one, % of the expected (signed: + when measured is higher). @throws RangeError unless expected is above 0. */
export function reDisagreementPct(expected: number, measuredMean: number): number {
  if (!(expected > 0) || !Number.isFinite(expected)) throw new RangeError('expected Re must be above 0 Ω')
  return ((measuredMean - expected) / expected) * 100
}

/** Conetrail's default warning threshold for that disagreement, % (the products.re_warn_pct default; our choice). */
export const DEFAULT_RE_WARN_PCT = 10

/** True when the measured mean Re differs from the expected one by more than warnPct per cent, either way. */
export function reDisagrees(expected: number, measuredMean: number, warnPct: number = DEFAULT_RE_WARN_PCT): boolean {
  return Math.abs(reDisagreementPct(expected, measuredMean)) > warnPct
}

/** A coil in a few words for tables: "4 layers, AWG 31, 180 turns on Ø 26.6 mm". */
export function describeCoil(coil: Coil): string {
  const wire = `${coil.layers} layer${coil.layers === 1 ? '' : 's'}, AWG ${coil.awg}${coil.strands > 1 ? ` × ${coil.strands} in parallel` : ''}`
  const length = coil.lengthM !== undefined ? `${coil.lengthM} m` : `${coil.turns} turns on Ø ${coil.meanDiameterMm} mm`
  return `${wire}, ${length}`
}
