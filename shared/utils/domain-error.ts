import { ERROR_CODES, type ErrorCode } from './error-codes'

/**
 * What the engine, the repos and the services throw when a request cannot be done: a code from the
 * one table (shared/utils/error-codes.ts) and a readable message, never an HTTP status. The
 * server's error hook answers it with the code's status and `{ code, ...details }` as data.
 */
export class DomainError<C extends ErrorCode = ErrorCode> extends Error {
  readonly code: C
  /** Extra fields for the answer's data (e.g. the form field a refusal is about). */
  readonly details: Record<string, unknown>

  constructor(code: C, message?: string, details: Record<string, unknown> = {}) {
    super(message ?? ERROR_CODES[code].message)
    this.name = new.target.name
    this.code = code
    this.details = details
  }
}
