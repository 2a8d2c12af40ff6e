import { CHECK_LABELS, DEFAULT_FLOORS, UPPER_ONLY, type FloorName } from '#shared/utils/mask'

const UNIT_WORDS = { '%': '%', dB: 'dB', pp: 'points' } as const
// A floor applies per band of a curve, so the curves are named as curves (the bench calls the response check "Response").
const CURVE_LABELS: Partial<Record<FloorName, string>> = { splDb: 'Response curve', impedanceOhm: 'Impedance curve' }

/** How the Products page names a floor: the check's label, or the curve it bounds. */
export function floorLabel(name: FloorName): string {
  return CURVE_LABELS[name] ?? CHECK_LABELS[name]?.label ?? name
}

/** A floor's unit in words: % (of the golden mean), dB, or points (percentage points, for THD). */
export function floorUnit(name: FloorName): string {
  return UNIT_WORDS[DEFAULT_FLOORS[name].unit]
}

/** ± for a limit on both sides of the mean; + for THD and rub and buzz, limited from above only. */
export function floorSign(name: FloorName): '±' | '+' {
  return (UPPER_ONLY as ReadonlySet<string>).has(name) ? '+' : '±'
}
