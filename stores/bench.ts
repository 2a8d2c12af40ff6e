import { defineStore } from 'pinia'

/** localStorage key of the bench choices; versioned so a later shape can ignore old values. */
const STORAGE_KEY = 'conetrail.bench.v1'

interface BenchChoice {
  stationId: number | null
  productCode: string | null
  lotCode: string
  ambientC: number | null
}

function readChoice(): BenchChoice {
  const empty: BenchChoice = { stationId: null, productCode: null, lotCode: '', ambientC: null }
  if (!import.meta.client) return empty
  try {
    const raw: unknown = JSON.parse(localStorage.getItem(STORAGE_KEY) ?? 'null')
    if (!raw || typeof raw !== 'object') return empty
    const r = raw as Record<string, unknown>
    return {
      stationId: typeof r.stationId === 'number' ? r.stationId : null,
      productCode: typeof r.productCode === 'string' ? r.productCode : null,
      lotCode: typeof r.lotCode === 'string' ? r.lotCode : '',
      ambientC: typeof r.ambientC === 'number' ? r.ambientC : null,
    }
  } catch {
    return empty // storage blocked or a damaged value: start from nothing
  }
}

/**
 * What the technician set up at this bench PC: the station it stands at and the product on the
 * line. Remembered across reloads in localStorage (per browser, which is per bench).
 */
export const useBenchStore = defineStore('bench', () => {
  const stationId = ref<number | null>(null)
  const productCode = ref<string | null>(null)
  /** Lot on the line and room temperature (Re is then referred to 20 °C): set once per shift. */
  const lotCode = ref('')
  const ambientC = ref<number | null>(null)
  let restored = false

  /** Reads the saved choice; call from onMounted so server and client render the same first. */
  function restore() {
    if (restored) return
    restored = true
    const saved = readChoice()
    stationId.value = saved.stationId
    productCode.value = saved.productCode
    lotCode.value = saved.lotCode
    ambientC.value = saved.ambientC
  }

  watch([stationId, productCode, lotCode, ambientC], () => {
    if (!import.meta.client || !restored) return
    try {
      localStorage.setItem(STORAGE_KEY, JSON.stringify({ stationId: stationId.value, productCode: productCode.value, lotCode: lotCode.value, ambientC: ambientC.value }))
    } catch {
      // storage full or blocked: the choice lives until the tab closes
    }
  })

  return { stationId, productCode, lotCode, ambientC, restore }
})
