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
  const d = digits ?? (Math.abs(v) >= 100 ? 1 : Math.abs(v) >= 10 ? 2 : 3)
  return v.toFixed(d)
}

/** Date and local time of an ISO timestamp, e.g. 2026-03-04 14:03, or a dash. */
export function lotWhen(iso: string | null | undefined): string {
  if (!iso) return '–'
  const d = new Date(iso)
  const pad = (n: number) => String(n).padStart(2, '0')
  return `${d.getFullYear()}-${pad(d.getMonth() + 1)}-${pad(d.getDate())} ${pad(d.getHours())}:${pad(d.getMinutes())}`
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
