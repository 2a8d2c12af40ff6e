/**
 * A realistic production mask built around one clean good unit, for the real-line tests (the
 * disturbance table and the line samples): the limits an engineer would set on a woofer line.
 */
import { RUB_BUZZ_LIMIT_DB, type AnalysisResult } from '../../../server/analysis/index.ts'
import { maskLimitsSchema, type MaskLimits } from '../../../shared/utils/mask.ts'

/** Fs ±10 %, Re (20 °C) ±5 %, Qts ±15 %, sensitivity ±1.5 dB: common practice for woofer lines. */
export const FS_TOL = 0.1
export const RE_TOL = 0.05
export const QTS_TOL = 0.15
export const SENSITIVITY_TOL_DB = 1.5
/** THD at most 5 % over 100 Hz–5 kHz (common practice for a woofer at half a watt). */
export const THD_MAX_PCT = 5
export const THD_BAND_HZ: [number, number] = [100, 5000]
/** The response within ±3 dB of the clean unit from 100 Hz to 10 kHz (common practice). */
export const RESPONSE_TOL_DB = 3
export const RESPONSE_BAND_HZ: [number, number] = [100, 10_000]
/**
 * Rated impedance for the IEC 60268-5 rule (minimum above Fs ≥ 80 % of rated): the demo driver and
 * the samples' unit have a minimum near 5.9 Ω, so they may be rated at most 7.4 Ω; 6 Ω.
 */
export const RATED_OHM = 6

export function maskAround(clean: AnalysisResult): MaskLimits {
  const p = clean.parameters
  const re = p.re20Ohm ?? p.reOhm!
  const spl = clean.curves.splDb!
  const pts = clean.curves.freqHz
    .map((f, i) => [f, spl[i]] as const)
    .filter(([f, v]) => f >= RESPONSE_BAND_HZ[0] && f <= RESPONSE_BAND_HZ[1] && v != null) as [number, number][]
  return maskLimitsSchema.parse({
    scalars: {
      fsHz: { low: p.fsHz! * (1 - FS_TOL), high: p.fsHz! * (1 + FS_TOL) },
      re20Ohm: { low: re * (1 - RE_TOL), high: re * (1 + RE_TOL) },
      qts: { low: p.qts! * (1 - QTS_TOL), high: p.qts! * (1 + QTS_TOL) },
      sensitivityDb: { low: p.sensitivityDb! - SENSITIVITY_TOL_DB, high: p.sensitivityDb! + SENSITIVITY_TOL_DB },
      thdMaxPct: { low: null, high: THD_MAX_PCT },
      rubBuzzDb: { low: null, high: RUB_BUZZ_LIMIT_DB },
    },
    polarityNormal: true,
    curves: {
      splDb: { freqHz: pts.map(([f]) => f), low: pts.map(([, v]) => v - RESPONSE_TOL_DB), high: pts.map(([, v]) => v + RESPONSE_TOL_DB) },
    },
    thdBandHz: THD_BAND_HZ,
  })
}
