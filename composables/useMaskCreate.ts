import type { MaskView } from '#shared/types/api'
import { maskCreateSchema } from '#shared/utils/mask'

/** The proposal settings as the form holds them: an empty field means "the default". */
export interface MaskProposalDraft {
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
  k: 3,
  floorDb: 1.5,
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

/** Creates a draft from the picked golden units (same schema as the route), then opens it. */
export function useMaskCreate() {
  const { busy, error, run } = useAction()

  async function create(product: string | null, goldenSerials: string[], d: MaskProposalDraft) {
    error.value = null
    const parsed = maskCreateSchema.safeParse({
      product: product ?? '',
      goldenSerials,
      k: d.k ?? undefined,
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
