import { DomainError } from '../../shared/utils/domain-error'
import type { ErrorCode } from '../../shared/utils/error-codes'

/**
 * Typed input errors of the measurement engine. Each carries a stable machine code from the one
 * error table (shared/utils/error-codes.ts) and a readable message.
 */
export const ANALYSIS_ERROR_CODES = [
  'empty_file',
  'not_wave',
  'truncated',
  'size_mismatch',
  'unsupported_encoding',
  'channel_mismatch',
  'sample_rate_out_of_range',
  'sample_rate_too_low',
  'too_short',
  'clipped',
  'silent_drive',
  'non_finite',
  'duplicate_chunk',
  'drive_probe_fault',
  'sense_probe_fault',
  'invalid_profile',
  'table_too_few_points',
  'table_not_increasing',
  'table_negative_magnitude',
  'table_unparsable',
  'table_out_of_range',
  'table_too_many_points',
  'table_band_too_narrow',
  'recording_too_long',
  'not_measured',
] as const satisfies readonly ErrorCode[]

export type AnalysisErrorCode = (typeof ANALYSIS_ERROR_CODES)[number]

export class AnalysisInputError extends DomainError<AnalysisErrorCode> {
  /** 1-based line number for impedance-table errors. */
  readonly line: number | undefined
  /** Channel index (0-based, file order) for channel-specific errors. */
  readonly channel: number | undefined

  constructor(code: AnalysisErrorCode, message: string, detail: { line?: number; channel?: number } = {}) {
    super(code, message)
    this.line = detail.line
    this.channel = detail.channel
  }
}
