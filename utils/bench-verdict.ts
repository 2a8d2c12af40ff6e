import type { CheckView, RecordingSummary } from '#shared/types/api'
import { CHECK_LABELS } from '#shared/utils/mask'
import { showsUncertainty, type CheckOutcome } from '#shared/utils/units'
import type { Verdict } from '#shared/utils/verdict'

/** What the bench shows for one recording: the verdict once judged, otherwise where it stands. */
export type BenchState = Verdict | 'unjudged' | 'rejected' | 'failed' | 'pending'

export function benchStateOf(r: Pick<RecordingSummary, 'status' | 'verdict'>): BenchState {
  if (r.status === 'rejected') return 'rejected'
  if (r.status === 'failed') return 'failed'
  if (r.status !== 'done') return 'pending'
  return r.verdict ?? 'unjudged'
}

/** Word, explanation and colours of each state. The word and an icon always carry the meaning; colour only repeats it. */
export const BENCH_STATES: Record<BenchState, { word: string; short: string; hint: string; tone: string }> = {
  pass: { word: 'PASS', short: 'Pass', hint: 'Every check is inside the mask.', tone: 'text-verdict-pass bg-verdict-passBg border-verdict-pass' },
  fail: { word: 'FAIL', short: 'Fail', hint: 'Set the unit aside for rework.', tone: 'text-verdict-fail bg-verdict-failBg border-verdict-fail' },
  retest: {
    word: 'RETEST',
    short: 'Retest',
    hint: 'This recording could not decide: not a fail. Measure the unit again (see what to do).',
    tone: 'text-verdict-retest bg-verdict-retestBg border-verdict-retest',
  },
  unjudged: {
    word: 'NOT JUDGED',
    short: 'Not judged',
    hint: 'No released mask for this product yet. The result is kept and judged once a mask is released.',
    tone: 'text-verdict-none bg-paper-sunk border-verdict-none',
  },
  rejected: {
    word: 'REJECTED',
    short: 'Rejected',
    hint: 'The recording could not be used. Check the fixture and record the unit again.',
    tone: 'text-copper-dark bg-copper-light border-copper',
  },
  failed: {
    word: 'FAILED',
    short: 'Analysis failed',
    hint: 'The analysis did not complete: this is not a verdict on the unit. Upload again or tell the engineer.',
    tone: 'text-ink bg-steel-light border-steel',
  },
  pending: { word: 'ANALYSING', short: 'Analysing', hint: 'The recording is queued or being analysed.', tone: 'text-steel bg-paper-sunk border-steel-light' },
}

export function checkLabel(name: string): string {
  return CHECK_LABELS[name]?.label ?? name
}

/** A check that could not decide, shown like a state (word, icon, tone): never as a fail. */
export const UNDECIDED_STATE = {
  word: 'COULD NOT DECIDE',
  short: 'Could not decide',
  hint: 'The figure is missing, or its uncertainty straddles the limit.',
  tone: 'text-verdict-retest bg-verdict-retestBg border-verdict-retest',
}

/** Word, hint and tone of a state, or of a check that could not decide. */
export function stateMeta(state: BenchState | 'undecided'): (typeof BENCH_STATES)[BenchState] {
  return state === 'undecided' ? UNDECIDED_STATE : BENCH_STATES[state]
}

/** How a check came out, as the check tables word it: never "out" for a check that could not decide. */
export const CHECK_OUTCOME_WORDS: Record<CheckOutcome, string> = { pass: 'ok', fail: 'out', undecided: 'could not decide' }

/** The failure in plain words, for the technician at the line. */
export function checkPlain(name: string): string {
  return CHECK_LABELS[name]?.plain ?? `${checkLabel(name)} out of limits`
}

/** A figure with a sensible number of digits (3 significant, no exponent), or a dash when missing. */
export function formatFigure(v: unknown, digits = 3): string {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '–'
  if (v === 0) return '0'
  const abs = Math.abs(v)
  const decimals = Math.max(0, Math.min(4, digits - 1 - Math.floor(Math.log10(abs))))
  return v.toFixed(decimals)
}

/**
 * The measured side of a check as the table shows it (polarity and curve checks read differently):
 * "below x" for a figure under its noise floor x, "v ± u" where noise limits it.
 */
export function checkValueText(c: CheckView): string {
  if (c.name === 'resonance') return 'none found'
  // A figure the file should have given but did not: the check cannot decide (or fails) without a value.
  if (c.value === null && !c.pass && c.name !== 'coil') return 'not measured'
  if (c.name === 'polarity') return c.value === 1 ? 'normal' : c.value === -1 ? 'inverted' : '–'
  if (c.name === 'splDb' || c.name === 'impedanceOhm') {
    const isOver = c.value !== null && c.value > 0
    const over = isOver ? `${formatFigure(c.value)} over` : 'inside'
    // Inside, the frequency is where the curve came closest to its limits.
    const text = c.atHz ? `${over}${isOver ? ' at' : ', closest at'} ${formatFigure(c.atHz)} Hz` : over
    return showsUncertainty(c.uncertainty) ? `${text} (± ${formatFigure(c.uncertainty, 2)})` : text
  }
  if (c.below) return `below ${formatFigure(c.value)}`
  if (showsUncertainty(c.uncertainty)) return `${formatFigure(c.value)} ± ${formatFigure(c.uncertainty, 2)}`
  return formatFigure(c.value)
}

/** A bound of a check as the table shows it (polarity has a required state, not a number). */
export function checkBoundText(c: CheckView, side: 'low' | 'high'): string {
  if (c.name === 'polarity') return side === 'low' && c.low !== null ? 'normal' : '–'
  // A curve check's value is its worst excursion beyond the mask band; the bounds are the band itself.
  if (c.name === 'splDb' || c.name === 'impedanceOhm') return 'mask'
  return formatFigure(c[side])
}

/** Local clock time of an ISO timestamp, e.g. 14:03:27. */
export function clockTime(iso: string): string {
  return new Date(iso).toLocaleTimeString([], { hour: '2-digit', minute: '2-digit', second: '2-digit', hourCycle: 'h23' })
}
