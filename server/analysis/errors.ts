/**
 * Typed input errors of the measurement engine. Each carries a stable machine code
 * (mapped to HTTP by the server's error mapper) and a readable message.
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
  'invalid_profile',
  'table_too_few_points',
  'table_not_increasing',
  'table_negative_magnitude',
  'table_unparsable',
] as const

export type AnalysisErrorCode = (typeof ANALYSIS_ERROR_CODES)[number]

export class AnalysisInputError extends Error {
  readonly code: AnalysisErrorCode
  /** 1-based line number for impedance-table errors. */
  readonly line: number | undefined
  /** Channel index (0-based, file order) for channel-specific errors. */
  readonly channel: number | undefined

  constructor(code: AnalysisErrorCode, message: string, detail: { line?: number; channel?: number } = {}) {
    super(message)
    this.name = 'AnalysisInputError'
    this.code = code
    this.line = detail.line
    this.channel = detail.channel
  }
}

export function isAnalysisInputError(e: unknown): e is AnalysisInputError {
  return e instanceof AnalysisInputError
}
