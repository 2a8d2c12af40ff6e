import { CHECK_LABELS } from '#shared/utils/mask'

/** A fraction 0–1 as a percentage ("60 %", "66.7 %"), or a dash when there was nothing to count. */
export function lotPct(v: number | null | undefined): string {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '–'
  const p = Math.round(v * 1000) / 10
  return `${Number.isInteger(p) ? p.toFixed(0) : p.toFixed(1)} %`
}

/** A measured figure with sensible decimals for its size, or a dash. */
export function lotNum(v: number | null | undefined, digits?: number): string {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '–'
  if (digits !== undefined) return v.toFixed(digits)
  const a = Math.abs(v)
  // Small spreads (a standard deviation of 0.002) keep three significant digits instead of rounding to zero.
  if (a !== 0 && a < 1) return v.toPrecision(3)
  return v.toFixed(a >= 100 ? 1 : a >= 10 ? 2 : 3)
}

/** Date and local time of an ISO timestamp, e.g. 2026-03-04 14:03, or a dash (the shared formatWhen). */
export function lotWhen(iso: string | null | undefined): string {
  return formatWhen(iso)
}

/** Capability below this is flagged: 1.33 is common practice for an existing process, not a standard. */
export const LOT_CPK_MIN = 1.33

/** The roles that may download exports (the server guard decides; this only hides the buttons). */
export const LOT_EXPORT_ROLES = ['quality', 'engineer'] as const

/** A failure class in words: "fsHz:high" → "Fs high", "polarity" → "Polarity". */
export function lotClassLabel(failureClass: string): string {
  const [check = '', side] = failureClass.split(':')
  const label = CHECK_LABELS[check]?.label ?? check
  return side ? `${label} ${side}` : label
}

/** Decimals that tell apart ticks `step` apart (at least `min`). */
export function lotStepDigits(step: number, min = 0): number {
  return step > 0 && Number.isFinite(step) ? Math.max(min, Math.ceil(-Math.log10(step)) + 1) : min
}
