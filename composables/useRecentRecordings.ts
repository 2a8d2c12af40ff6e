/** How often the station's recent results refresh themselves. */
const RECENT_REFRESH_MS = 3000
const RECENT_LIMIT = 20

/**
 * The latest recordings of one station, newest first, refreshed every few seconds while the page
 * is open and visible. Client only: the station choice lives in the browser.
 */
export function useRecentRecordings(stationId: Ref<number | null>) {
  const query = computed(() => ({ station: stationId.value ?? undefined, limit: RECENT_LIMIT }))
  const res = useFetch('/api/recordings', {
    key: 'bench-recent',
    query,
    server: false,
    default: () => [],
    // A timer tick must not cancel a request that is still on its way.
    dedupe: 'defer',
  })

  let timer: ReturnType<typeof setInterval> | undefined
  onMounted(() => {
    timer = setInterval(() => {
      if (stationId.value !== null && document.visibilityState === 'visible') void res.refresh()
    }, RECENT_REFRESH_MS)
  })
  onBeforeUnmount(() => clearInterval(timer))
  return res
}
