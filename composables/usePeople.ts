import type { PersonSummary } from '#shared/types/api'

export function usePeople() {
  return useFetch<PersonSummary[]>('/api/people', { key: 'people', default: () => [] })
}
