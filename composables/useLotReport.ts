import type { LotReport } from '#shared/types/reports'

/** One lot's report (key per lot code so two reports never share a cache entry). */
export function useLotReport(code: Ref<string>) {
  const url = computed(() => `/api/lots/${encodeURIComponent(code.value)}`)
  return useFetch<LotReport>(url, { key: computed(() => `lot-report:${code.value}`) })
}

/** The export links of a lot (plain downloads: the browser keeps the session cookie). */
export function lotExportUrls(code: string): { csv: string; pdf: string } {
  const base = `/api/lots/${encodeURIComponent(code)}`
  return { csv: `${base}/export.csv`, pdf: `${base}/report.pdf` }
}
