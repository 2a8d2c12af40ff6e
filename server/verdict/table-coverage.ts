import type { MaskLimits } from '../../shared/utils/mask.ts'

/**
 * How far below the lowest expected Fs an impedance table must start: half an octave, the same
 * margin the engine needs below a resonance to fit it (common practice; see docs/method.md).
 */
export const TABLE_START_BELOW_FS = Math.SQRT1_2

/**
 * What an impedance table must cover to judge a unit of the product, Hz: from half an octave below
 * the lowest Fs the released mask allows (when it limits Fs) up to the top of the product's
 * response band (its sensitivity band). Null for no lower bound.
 */
export function requiredTableBand(product: { sensitivityBandHz: readonly [number, number] }, limits: MaskLimits | null): [number | null, number] {
  const fs = limits?.scalars.fsHz
  const lowestFs = fs ? (fs.low ?? fs.high) : null
  return [lowestFs === null ? null : lowestFs * TABLE_START_BELOW_FS, product.sensitivityBandHz[1]]
}

/** Why a table spanning [first, last] Hz cannot judge the product, or null when it covers the band. */
export function tableCoverageProblem(spanHz: readonly [number, number], required: readonly [number | null, number]): string | null {
  const [first, last] = spanHz
  const [from, to] = required
  const hz = (f: number) => (f < 100 ? f.toFixed(1) : f.toFixed(0))
  if (from !== null && first > from) {
    return `The table starts at ${hz(first)} Hz; this product's tables must start at ${hz(from)} Hz or lower (half an octave below its lowest allowed Fs).`
  }
  if (last < to) return `The table ends at ${hz(last)} Hz; this product's tables must reach ${hz(to)} Hz (the top of its response band).`
  return null
}
