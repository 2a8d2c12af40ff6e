import type { CurveBasis, CurveLimit, LimitBasis, MaskView } from '#shared/types/api'
import type { DecisionRule, ScalarLimitName } from '#shared/utils/mask'
import type { MaskLimitsDraft } from './useMaskEditor'

/** Each decision rule in our words: a short name for the select and one line on what it does near a limit. */
export const DECISION_RULE_LOOK: Record<DecisionRule, { label: string; explain: string }> = {
  simple: {
    label: 'As measured',
    explain: 'The measured value decides. A value within its measurement uncertainty of a limit is marked marginal, but passes or fails as read.',
  },
  guarded_fail: {
    label: 'Guarded: fail when in doubt',
    explain: 'Each limit is pulled inwards by the figure’s measurement uncertainty: a value inside a limit but within its uncertainty of it fails.',
  },
  guarded_retest: {
    label: 'Guarded: measure again when in doubt',
    explain: 'A value within its measurement uncertainty of a limit, inside or outside, decides nothing: the unit is asked for a retest.',
  },
}

/** How each proposal rule set a limit, in words. */
const RULE_WORDS: Record<LimitBasis['rule'] | CurveBasis['rule'], string> = {
  interval: 'tolerance interval',
  floor: 'floor (common practice)',
  k_sigma: 'fixed k',
  mixed: 'tolerance interval and floor (common practice)',
}

/** A number to 2–3 significant digits, e.g. 4.41, 12.3, 0.0213. */
export function sigFig(v: number, digits = 3): string {
  return Number.isFinite(v) ? String(Number(v.toPrecision(digits))) : '–'
}

/** A share 0–1 as a percentage, e.g. "0.4 %", "0.02 %", "< 0.01 %". */
export function sharePct(share: number): string {
  const pct = 100 * share
  if (!Number.isFinite(pct)) return '–'
  if (pct === 0) return '0 %'
  if (pct < 0.01) return '< 0.01 %'
  return `${pct < 0.1 ? pct.toFixed(2) : pct < 10 ? pct.toFixed(1) : pct.toFixed(0)} %`
}

/** "1 in 250" for a share (as the release message counts it), rounded to two significant digits from 10 000 on; null for no share. */
export function oneIn(share: number): string | null {
  if (!(share > 0)) return null
  const n = Math.max(1, Math.round(1 / share))
  return `1 in ${(n >= 10_000 ? Number(n.toPrecision(2)) : n).toLocaleString('en-US').replace(/,/g, ' ')}`
}

/** A coverage or confidence 0–1 as people say it: 0.99 → "99 %", 0.9983 → "99.83 %". */
export function levelPct(v: number): string {
  return `${Number((100 * v).toPrecision(4))} %`
}

const near = (a: number | null | undefined, b: number | null | undefined) =>
  a == null || b == null ? a == null && b == null : Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(a), Math.abs(b))

function sameCurve(a: CurveLimit | undefined, b: CurveLimit | undefined): boolean {
  if (!a || !b) return !a && !b
  const same = (x: (number | null)[], y: (number | null)[]) => x.length === y.length && x.every((v, i) => near(v, y[i]))
  return same(a.freqHz, b.freqHz) && same(a.low, b.low) && same(a.high, b.high)
}

/** How one limit was proposed: the rule, n, k, the floor's share of a curve, and whether it was edited since. */
export interface LimitBasisLine {
  rule: string
  n: number
  k: string
  /** Curves only: point sides the floor set, of all sides. */
  floorSides?: { byFloor: number; sides: number }
  edited: boolean
}

/** The limits as proposed, read defensively from the stored JSON. */
interface ProposedLimits {
  scalars?: Partial<Record<ScalarLimitName, { low: number | null; high: number | null }>>
  curves?: { splDb?: CurveLimit; impedanceOhm?: CurveLimit }
}

/**
 * A mask's proposal as its page shows it: per limit its basis line (the edited mark follows the
 * local copy being edited), the overall estimate and the coverage in words, the warnings.
 */
export function useMaskProposal(mask: Ref<MaskView | null | undefined>, limits: Ref<MaskLimitsDraft | null>) {
  const proposal = computed(() => mask.value?.proposal ?? null)
  const proposed = computed(() => (proposal.value?.proposedLimits ?? null) as ProposedLimits | null)
  /** Estimated false-reject share of a saved limit, 0–1, from the golden units (null: none estimated). */
  const estimateOf = (name: string): number | null => mask.value?.estimate?.byCheck?.[name] ?? null

  const scalars = computed(() => {
    const out: Partial<Record<ScalarLimitName, LimitBasisLine>> = {}
    const p = proposal.value
    for (const [name, b] of Object.entries(p?.scalars ?? {}) as [ScalarLimitName, LimitBasis][]) {
      const now = limits.value?.scalars[name]
      const then = proposed.value?.scalars?.[name]
      const edited = !!proposed.value && !(near(now?.low, then?.low) && near(now?.high, then?.high))
      out[name] = { rule: RULE_WORDS[b.rule], n: b.n, k: sigFig(b.k), edited }
    }
    return out
  })

  const curves = computed(() => {
    const out: { splDb?: LimitBasisLine; impedanceOhm?: LimitBasisLine } = {}
    for (const name of ['splDb', 'impedanceOhm'] as const) {
      const b = proposal.value?.curves[name]
      if (!b) continue
      const edited = !!proposed.value && !sameCurve(limits.value?.curves[name], proposed.value.curves?.[name])
      out[name] = { rule: RULE_WORDS[b.rule], n: b.n, k: sigFig(b.k), floorSides: { byFloor: b.sidesByFloor, sides: b.sides }, edited }
    }
    return out
  })

  /** The overall estimate as the page says it ("0.4 %", "1 in 250"), or null when the mask has none. */
  const overall = computed(() => {
    const share = mask.value?.estimate?.overall
    if (typeof share !== 'number' || !Number.isFinite(share)) return null
    return { share, pct: sharePct(share), oneIn: oneIn(share) }
  })

  /** The proposal's coverage and confidence in a sentence, or its fixed k. */
  const coverageLine = computed(() => {
    const p = proposal.value
    if (!p) return null
    const shared = `shared over ${p.limitCount} limit${p.limitCount === 1 ? '' : 's'} (${levelPct(p.coveragePerLimit)} each)`
    if (p.fixedK !== null) return `Proposed with a fixed k = ${sigFig(p.fixedK)} instead of tolerance intervals; the coverage aimed at was ${levelPct(p.coverage)} of good units, ${shared}.`
    return `Tolerance intervals for ${levelPct(p.coverage)} of good units at ${levelPct(p.confidence)} confidence, ${shared}.`
  })

  const warnings = computed(() => proposal.value?.warnings ?? [])
  return { proposal, scalars, curves, estimateOf, overall, coverageLine, warnings }
}
