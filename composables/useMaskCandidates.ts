import type { RecordingCurves } from '#shared/types/api'

/** Candidates listed for picking: the API's maximum, so pasted serials of older units are found too. */
const CANDIDATE_LIMIT = 2000

/**
 * The product's measured units to pick golden units from, which ones are ticked, and the
 * response curves of the ticked ones (fetched once each, as they are ticked).
 */
export function useMaskCandidates(product: Ref<string | null>) {
  const query = computed(() => ({ product: product.value ?? undefined, limit: CANDIDATE_LIMIT }))
  const res = useFetch('/api/masks/candidates', {
    key: 'mask-candidates',
    query,
    default: () => [],
    immediate: !!product.value,
    watch: false,
  })
  const picked = ref<string[]>([])
  const curves = shallowRef(new Map<number, RecordingCurves | null>())

  watch(product, async (code) => {
    picked.value = []
    if (code) await res.refresh()
    else res.data.value = []
  })

  async function loadCurves(recordingId: number) {
    if (curves.value.has(recordingId)) return
    curves.value = new Map(curves.value).set(recordingId, null)
    try {
      const url: string = `/api/recordings/${recordingId}`
      const view = await $fetch<{ curves?: RecordingCurves }>(url, { query: { include: 'curves' } })
      curves.value = new Map(curves.value).set(recordingId, view.curves ?? null)
    } catch {
      // The curve is only a picture: a unit whose curve cannot be read can still be picked.
      const next = new Map(curves.value)
      next.delete(recordingId)
      curves.value = next
    }
  }

  watch(picked, (serials) => {
    for (const c of res.data.value) if (serials.includes(c.serial)) void loadCurves(c.recordingId)
  })

  /** Ticks the units named in a pasted list; answers the serials that are not candidates. */
  function pickSerials(text: string): string[] {
    const wanted = text.split(/[\s,;]+/).filter(Boolean)
    const known = new Set(res.data.value.map((c) => c.serial))
    picked.value = [...new Set([...picked.value, ...wanted.filter((s) => known.has(s))])]
    return wanted.filter((s) => !known.has(s))
  }

  /** Overlays of the ticked units' response and their mean, on the first curve's frequency grid. */
  const overlay = computed(() => {
    const rows = res.data.value.filter((c) => picked.value.includes(c.serial))
    const drawn = rows.map((c) => ({ label: c.serial, curves: curves.value.get(c.recordingId) })).filter((r) => r.curves?.splDb)
    const freqHz = drawn[0]?.curves?.freqHz ?? []
    const lines = drawn.filter((r) => r.curves!.freqHz.length === freqHz.length).map((r) => ({ label: r.label, values: r.curves!.splDb! }))
    return { freqHz, lines, mean: meanCurve(lines.map((l) => l.values), freqHz.length) }
  })

  return { candidates: res.data, pending: res.status, picked, overlay, pickSerials }
}

/** Point-by-point mean of curves on one grid (null where no curve has a value). */
export function meanCurve(curves: (number | null)[][], length: number): (number | null)[] {
  return Array.from({ length }, (_, i) => {
    let sum = 0
    let n = 0
    for (const c of curves) {
      const v = c[i]
      if (typeof v === 'number' && Number.isFinite(v)) {
        sum += v
        n++
      }
    }
    return n ? sum / n : null
  })
}
