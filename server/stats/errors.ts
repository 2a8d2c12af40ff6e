/**
 * Typed input errors of the statistics core. Each carries a stable machine code (for the server's
 * error mapper) and a readable message; the statistics never raise HTTP errors themselves.
 */
export const STATS_ERROR_CODES = ['invalid_limits', 'too_few_points', 'non_finite_value', 'invalid_option'] as const
export type StatsErrorCode = (typeof STATS_ERROR_CODES)[number]

export class StatsError extends Error {
  readonly code: StatsErrorCode
  constructor(code: StatsErrorCode, message: string) {
    super(message)
    this.name = 'StatsError'
    this.code = code
  }
}
