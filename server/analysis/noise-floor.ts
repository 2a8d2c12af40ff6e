/**
 * What noise means for a figure: the coverage of the uncertainties and the margin a reading must
 * stand above the noise. The judge reads figures with these; the engine reports the floors.
 */

/** Coverage factor of the uncertainties: k = 2, about 95 % (JCGM 100:2008, GUM, 6.3). */
export const COVERAGE_K = 2
/**
 * A harmonic (or the THD they make) is measured only when it stands this far above the THD the
 * noise alone reads; otherwise it is reported as below that bound (our margin: 10 dB, 3.16×).
 */
export const THD_CLEAR_RATIO = Math.sqrt(10)

/**
 * Uncertainty (dB, k = COVERAGE_K) of a level read from a spectrum value of amplitude `signal`
 * carrying noise of RMS amplitude `noise` in the same scale.
 */
export function levelUncertaintyDb(signal: number, noise: number): number | null {
  if (!(signal > 0)) return null
  return 20 * Math.log10(1 + (COVERAGE_K * noise) / signal)
}
