import type { UnitSearchAnswer } from '#shared/types/units'
import { normalizeSerialQuery, SEARCH_MIN_CHARS } from '#shared/utils/units'

const SEARCH_URL = '/api/units'

/** The search answer for the units page's `q`; null while the box is empty (nothing is asked then). */
export function useUnitSearch(q: Ref<string>) {
  // useRequestFetch: on a full page load the server-side call carries the visitor's session cookie ($fetch would not).
  const fetcher = useRequestFetch()
  return useAsyncData<UnitSearchAnswer | null>(
    () => `unit-search:${q.value}`,
    // Typed by hand: inferring the route's type inside useAsyncData exceeds TypeScript's depth limit.
    () => (q.value ? fetcher<UnitSearchAnswer>(SEARCH_URL, { query: { q: q.value } }) : Promise.resolve(null)),
    { watch: [q] },
  )
}

/** Where a unit's page lives. */
export function unitPath(serial: string): string {
  return `/units/${encodeURIComponent(serial)}`
}

/**
 * The header's search: one hit opens that unit, anything else opens the units page with the list
 * (several hits) or the "never tested here" answer with the nearest serials.
 */
export function useUnitLookup() {
  const { busy, error, run } = useAction()

  async function lookUp(raw: string): Promise<boolean> {
    error.value = null
    const q = normalizeSerialQuery(raw)
    if (!q || q.length < SEARCH_MIN_CHARS) {
      error.value = q ? `Type at least ${SEARCH_MIN_CHARS} characters of the serial.` : 'A serial holds letters, digits and - _ . only.'
      return false
    }
    return run(async () => {
      const answer = await $fetch(SEARCH_URL, { query: { q } })
      const only = answer.units.length === 1 ? answer.units[0] : undefined
      await navigateTo(only ? unitPath(only.serial) : { path: '/units', query: { q: answer.query } })
    })
  }

  return { busy, error, lookUp }
}
