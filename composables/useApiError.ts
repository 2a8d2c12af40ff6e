import type { ApiErrorBody } from '#shared/types/api'

/** The readable message and code of a failed $fetch, whatever threw. */
export function apiErrorOf(err: unknown): { message: string; code: string } {
  if (err && typeof err === 'object' && 'data' in err) {
    const data = (err as { data?: Partial<ApiErrorBody> }).data
    if (data?.message) return { message: data.message, code: data.data?.code ?? 'error' }
  }
  return { message: 'The server could not be reached. Check the network and try again.', code: 'network' }
}
