/**
 * The one way Conetrail writes a moment: local date and 24-hour time, e.g. 2026-12-02 14:03
 * (with seconds where the order of events matters, e.g. the audit log: 2026-12-02 14:03:09).
 * The same on every page and in every browser language, and sortable as text.
 */
export function formatWhen(iso: string | null | undefined, options: { seconds?: boolean; empty?: string } = {}): string {
  if (!iso) return options.empty ?? '–'
  const d = new Date(iso)
  if (Number.isNaN(d.getTime())) return options.empty ?? '–'
  const pad = (n: number) => String(n).padStart(2, '0')
  const time = `${pad(d.getHours())}:${pad(d.getMinutes())}${options.seconds ? `:${pad(d.getSeconds())}` : ''}`
  return `${d.getFullYear()}-${pad(d.getMonth() + 1)}-${pad(d.getDate())} ${time}`
}
