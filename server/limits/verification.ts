/**
 * A reference unit's accepted values and default verification limits (rules in
 * shared/utils/reference-units.ts). Pure: the service passes the unit's measurements on the trusted
 * station, the active mask's scalar limits and the product's floors.
 */
import { summarize } from '../stats/summary.ts'
import { DEFAULT_FLOORS, UPPER_ONLY, floorOf, figureValue, type FigureSource, type LimitFloors, type MaskLimits, type ScalarLimitName } from '../../shared/utils/mask.ts'
import {
  REFERENCE_FIGURES,
  REPEAT_SD_MULTIPLIER,
  TOLERANCE_SHARE,
  type AcceptedValue,
  type CheckedFigure,
  type ReferenceFigures,
  type VerificationLimit,
} from '../../shared/utils/reference-units.ts'

/** Mean, sample SD and n of each figure over the measurements (figures no measurement has are left out). */
export function acceptedValues(measurements: readonly FigureSource[], thdBandHz: MaskLimits['thdBandHz'] | null): ReferenceFigures<AcceptedValue> {
  const out: ReferenceFigures<AcceptedValue> = {}
  for (const name of REFERENCE_FIGURES) {
    const s = summarize(measurements.map((m) => figureValue(m, name, thdBandHz)))
    if (s) out[name] = { value: s.mean, sd: s.sd, n: s.n }
  }
  return out
}

/** The tolerance width a figure's verification limit takes its share of: the mask's limit, else the product's floor. */
export function toleranceWidth(name: ScalarLimitName, accepted: number, mask: MaskLimits['scalars'] | null, floors: LimitFloors | null): number {
  const lim = mask?.[name]
  if (lim && lim.low !== null && lim.high !== null) return lim.high - lim.low
  const side = lim?.high ?? lim?.low
  if (side !== null && side !== undefined) return 2 * Math.abs(side - accepted)
  const floor = floorOf(floors, name)
  return 2 * (DEFAULT_FLOORS[name].unit === '%' ? (floor / 100) * Math.abs(accepted) : floor)
}

/** Default verification limits around the accepted values (none for THD and rub and buzz), with the engineer's own where given. */
export function verificationLimits(
  accepted: ReferenceFigures<AcceptedValue>,
  mask: MaskLimits['scalars'] | null,
  floors: LimitFloors | null,
  own: ReferenceFigures<{ low: number; high: number }> = {},
): ReferenceFigures<VerificationLimit> {
  const out: ReferenceFigures<VerificationLimit> = {}
  for (const name of REFERENCE_FIGURES) {
    const a = accepted[name]
    if (!a) continue
    const set = own[name]
    if (set) {
      out[name] = { low: set.low, high: set.high, rule: 'engineer', toleranceWidth: null }
      continue
    }
    // THD and rub and buzz of a good unit read the station's noise floor, not its accuracy: no default limit.
    if (UPPER_ONLY.has(name)) continue
    const width = toleranceWidth(name, a.value, mask, floors)
    const repeat = REPEAT_SD_MULTIPLIER * a.sd
    const share = TOLERANCE_SHARE * width
    const half = Math.max(repeat, share)
    out[name] = { low: a.value - half, high: a.value + half, rule: repeat > share ? 'repeatability' : 'tolerance_share', toleranceWidth: width }
  }
  return out
}

/** A station check: each limited figure of the reference unit's new measurement against its verification limit. */
export function judgeStationCheck(
  measurement: FigureSource,
  accepted: ReferenceFigures<AcceptedValue>,
  limits: ReferenceFigures<VerificationLimit>,
  thdBandHz: MaskLimits['thdBandHz'] | null,
): { pass: boolean; figures: ReferenceFigures<CheckedFigure> } {
  const figures: ReferenceFigures<CheckedFigure> = {}
  for (const name of REFERENCE_FIGURES) {
    const lim = limits[name]
    const acc = accepted[name]
    if (!lim || !acc) continue
    const value = figureValue(measurement, name, thdBandHz)
    figures[name] = { value, accepted: acc.value, low: lim.low, high: lim.high, pass: value !== null && value >= lim.low && value <= lim.high }
  }
  return { pass: Object.values(figures).every((f) => f.pass), figures }
}
