import type { StationCheckView } from '#shared/types/api'
import type { CheckPlan, StationCheckState, StationState } from '#shared/utils/station-checks'
import { CHECK_LABELS } from '#shared/utils/mask'

/** Words and colours of each station check state; the word carries the meaning, colour only repeats it. */
export const STATION_STATE_LOOK: Record<StationCheckState, { word: string; tone: string; mark: string }> = {
  verified: { word: 'Checked', tone: 'border-verdict-pass bg-verdict-passBg text-verdict-pass', mark: '✓' },
  due: { word: 'Check due', tone: 'border-copper bg-copper-light text-copper-dark', mark: '!' },
  failed: { word: 'Check failed', tone: 'border-verdict-fail bg-verdict-failBg text-verdict-fail', mark: '✕' },
  released: { word: 'Released', tone: 'border-verdict-retest bg-verdict-retestBg text-verdict-retest', mark: '↷' },
  no_plan: { word: 'No check plan', tone: 'border-steel-light bg-paper-sunk text-ink-soft', mark: '–' },
}

/** The badge's word: a release says until when. */
export function stationStateWord(s: Pick<StationState, 'state' | 'nextDueAt'>): string {
  if (s.state === 'released') return `Released until ${formatWhen(s.nextDueAt)}`
  return STATION_STATE_LOOK[s.state].word
}

/** "Since" line under the badge, in words for each state (null when there is nothing to say). */
export function stationSinceText(s: Pick<StationState, 'state' | 'since'>): string | null {
  if (!s.since) return s.state === 'verified' ? 'Not checked yet.' : null
  const when = formatWhen(s.since)
  switch (s.state) {
    case 'verified':
      return `Last passed check ${when}.`
    case 'due':
      return `Blocked since ${when}.`
    case 'failed':
      return `Blocked since ${when} (the failed check).`
    case 'released':
      return `Released ${when}.`
    default:
      return null
  }
}

/** A plan in one line, e.g. "at 06:00, 14:00 (Europe/Berlin) · every 8 h · every 200 units". */
export function planSummary(plan: CheckPlan | null): string {
  if (!plan) return 'No check plan: the station is never blocked.'
  const parts: string[] = []
  if (plan.shiftStarts.length) parts.push(`at each shift start ${plan.shiftStarts.join(', ')} (${plan.timeZone})`)
  if (plan.everyHours !== null) parts.push(`every ${formatFigure(plan.everyHours)} h`)
  if (plan.everyUnits !== null) parts.push(`every ${plan.everyUnits} production ${plan.everyUnits === 1 ? 'unit' : 'units'}`)
  return `Check ${parts.join(' · ')}.`
}

export interface FigureOutside {
  name: string
  label: string
  /** e.g. "47.3 Hz, limit 41.2–44.8 Hz", or "not measured, limit …". */
  text: string
}

/** The figures of a check outside their verification limits (or not measured), each with its value and limit. */
export function figuresOutside(check: Pick<StationCheckView, 'figures'>): FigureOutside[] {
  return Object.entries(check.figures)
    .filter(([, f]) => f && !f.pass)
    .map(([name, f]) => {
      const unit = CHECK_LABELS[name]?.unit ?? ''
      const u = unit ? ` ${unit}` : ''
      const value = f!.value === null ? 'not measured' : `${formatFigure(f!.value, 4)}${u}`
      const side = f!.value === null ? '' : f!.value > f!.high ? ' (above)' : f!.value < f!.low ? ' (below)' : ''
      return { name, label: CHECK_LABELS[name]?.label ?? name, text: `${value}${side}, limit ${formatFigure(f!.low, 4)}–${formatFigure(f!.high, 4)}${u}` }
    })
}
