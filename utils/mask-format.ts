import type { MaskSummary } from '#shared/types/api'

/** Words and colours of each mask state; the word always carries the meaning, colour only repeats it. */
export const MASK_STATUS_LOOK: Record<MaskSummary['status'], { word: string; tone: string; hint: string }> = {
  draft: { word: 'Draft', tone: 'bg-copper-light text-copper-dark', hint: 'Being edited; judges nothing yet.' },
  released: { word: 'Released', tone: 'bg-verdict-passBg text-verdict-pass', hint: 'Fixed for good; judges new results while it is the product’s active mask.' },
  retired: { word: 'Retired', tone: 'bg-paper-sunk text-ink-soft', hint: 'No longer judges anything; results keep the version that judged them.' },
}

/** Date and local time of an ISO timestamp, e.g. 2026-03-04 14:03, or a dash (the shared formatWhen). */
export function maskWhen(iso: string | null): string {
  return formatWhen(iso)
}

/** A percentage with one decimal, or a dash when there was nothing to count. */
export function maskPct(v: number | null | undefined): string {
  return typeof v === 'number' && Number.isFinite(v) ? `${v.toFixed(1)} %` : '–'
}
