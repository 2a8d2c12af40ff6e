import type { ApiErrorBody } from '#shared/types/api'
import { codeForStatus, isErrorCode, type ErrorCode } from '#shared/utils/error-codes'

/** What a failed request says, for a form or a page: the server's words and its code from the one table. */
export interface ApiErrorInfo {
  message: string
  /** `network` when no answer came (the server could not be reached). */
  code: ErrorCode | 'network'
}

/** The readable message and code of a failed $fetch (or a bench upload), whatever threw. */
export function apiErrorOf(err: unknown): ApiErrorInfo {
  if (err && typeof err === 'object' && 'data' in err) {
    const body = (err as { data?: Partial<ApiErrorBody>; statusCode?: number }).data
    if (body?.message) {
      const code = body.data?.code
      return { message: body.message, code: isErrorCode(code) ? code : codeForStatus(body.statusCode ?? 500) }
    }
  }
  return { message: 'The server could not be reached. Check the network and try again.', code: 'network' }
}
