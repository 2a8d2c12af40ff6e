import type { MaskView } from '#shared/types/api'
import { DEFAULT_DECISION_RULE, maskCreateSchema, type DecisionRule } from '#shared/utils/mask'

/** The proposal settings as the form holds them: an empty field means "the default". */
export interface MaskProposalDraft {
  /** Share of good units the mask should pass and the confidence of its tolerance intervals, in % (empty: 99 and 95). */
  coveragePct: number | null
  confidencePct: number | null
  decisionRule: DecisionRule
  /** A fixed multiplier of σ that replaces the tolerance intervals (empty: tolerance intervals). */
  k: number | null
  floorDb: number | null
  fromHz: number | null
  toHz: number | null
  name: string
  /** Optional shaping: a floor of its own for each side, one region with extra margin, an impedance band. */
  upperFloorDb: number | null
  lowerFloorDb: number | null
  regionFromHz: number | null
  regionToHz: number | null
  regionDb: number | null
  impedanceCurve: boolean
}

export const DEFAULT_PROPOSAL: MaskProposalDraft = {
  coveragePct: null,
  confidencePct: null,
  decisionRule: DEFAULT_DECISION_RULE,
  k: null,
  // Empty: the product's own response floor (a number here would override it).
  floorDb: null,
  fromHz: null,
  toHz: null,
  name: '',
  upperFloorDb: null,
  lowerFloorDb: null,
  regionFromHz: null,
  regionToHz: null,
  regionDb: null,
  impedanceCurve: false,
}

/** The percentages the schema takes as shares (coverage 0.5–0.9999, confidence 0.5–0.999), checked in the form's own unit. */
const PERCENT_RANGES = [
  { key: 'coveragePct', label: 'Coverage', min: 50, max: 99.99 },
  { key: 'confidencePct', label: 'Confidence', min: 50, max: 99.9 },
] as const

function percentRangeProblem(d: MaskProposalDraft): string | null {
  for (const r of PERCENT_RANGES) {
    const v = d[r.key]
    if (v !== null && !(v >= r.min && v <= r.max)) return `${r.label}: between ${r.min} and ${r.max} %`
  }
  return null
}

/** Creates a draft from the picked golden units (same schema as the route), then opens it. */
export function useMaskCreate() {
  const { busy, error, run } = useAction()

  async function create(product: string | null, goldenSerials: string[], d: MaskProposalDraft) {
    error.value = null
    const range = percentRangeProblem(d)
    if (range) {
      error.value = range
      return
    }
    const parsed = maskCreateSchema.safeParse({
      product: product ?? '',
      goldenSerials,
      k: d.k ?? undefined,
      coverage: d.coveragePct !== null ? d.coveragePct / 100 : undefined,
      confidence: d.confidencePct !== null ? d.confidencePct / 100 : undefined,
      decisionRule: d.decisionRule,
      floorDb: d.floorDb ?? undefined,
      fromHz: d.fromHz ?? undefined,
      toHz: d.toHz ?? undefined,
      name: d.name.trim() || undefined,
      upper: d.upperFloorDb !== null ? { floorDb: d.upperFloorDb } : undefined,
      lower: d.lowerFloorDb !== null ? { floorDb: d.lowerFloorDb } : undefined,
      regions:
        d.regionFromHz !== null && d.regionToHz !== null && d.regionDb !== null
          ? [{ fromHz: d.regionFromHz, toHz: d.regionToHz, upperDb: d.regionDb, lowerDb: d.regionDb }]
          : undefined,
      impedanceCurve: d.impedanceCurve || undefined,
    })
    if (!parsed.success) {
      error.value = parsed.error.issues.map((i) => (i.path.length ? `${i.path.join('.')}: ${i.message}` : i.message)).join('; ')
      return
    }
    await run(async () => {
      // Typed by hand: inferring a POST route's type inside a callback can exceed TypeScript's depth limit.
      const mask = await $fetch<MaskView>('/api/masks', { method: 'POST', body: parsed.data })
      await refreshNuxtData('masks')
      await navigateTo(`/masks/${mask.id}`)
    })
  }

  return { error, busy, create }
}
