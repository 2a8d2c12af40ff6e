import { DomainError } from '../../shared/utils/domain-error'
import type { ErrorCode } from '../../shared/utils/error-codes'

/**
 * Typed input errors of the statistics core. Each carries a stable machine code from the one error
 * table and a readable message; the statistics never raise HTTP errors themselves.
 */
export const STATS_ERROR_CODES = ['invalid_limits', 'too_few_points', 'non_finite_value', 'invalid_option', 'unbalanced_study'] as const satisfies readonly ErrorCode[]
export type StatsErrorCode = (typeof STATS_ERROR_CODES)[number]

export class StatsError extends DomainError<StatsErrorCode> {}
