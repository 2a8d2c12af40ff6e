import { createError } from 'h3'
import { ZodError } from 'zod'
import { AnalysisInputError } from '../analysis/index'
import { UnitInputError } from '../repos/units'
import { UploadRefused } from '../services/ingest'
import { MaskStateError } from '../repos/masks'
import { ProductConflict } from '../repos/products'
import { StationConflict } from '../repos/stations'
import { GoldenError } from '../services/masks'
import { ProposeError } from '../verdict/propose'
import { StorageUnavailable } from '../storage/recordings'
import { isDatabaseUnavailable } from './db'

const STATUS_TEXT: Record<number, string> = {
  400: 'Bad Request',
  401: 'Unauthorized',
  403: 'Forbidden',
  404: 'Not Found',
  409: 'Conflict',
  413: 'Payload Too Large',
  415: 'Unsupported Media Type',
  422: 'Unprocessable Content',
  503: 'Service Unavailable',
  507: 'Insufficient Storage',
}

/** An HTTP error with a readable message and a machine code in data.code (the only kind routes raise). */
export function httpError(statusCode: number, code: string, message: string, extra: Record<string, unknown> = {}) {
  return createError({ statusCode, statusMessage: STATUS_TEXT[statusCode], message, data: { code, ...extra } })
}

/** zod's own wording "Invalid input: expected number, received NaN" (used where a schema set none). */
const ZOD_TYPE = /^Invalid input: expected (\w+), received (\w+)/
const KIND: Record<string, string> = { number: 'a number', string: 'text', boolean: 'yes or no', array: 'a list', object: 'a group of fields', date: 'a date' }

/**
 * One issue in words for people: never a raw path such as `to.0`. Our schemas' own messages read
 * on their own (they name the field or the value); zod's generic ones get the field's name first,
 * a list item by its place ("to, item 1"), and a wrong type in plain words.
 */
export function issueText(path: string, message: string): string {
  const parts = path ? path.split('.') : []
  const name = parts.filter((p) => !/^\d+$/.test(p)).join(' ')
  const index = parts.find((p) => /^\d+$/.test(p))
  const generic = /^(Invalid|Too (small|big)|Unrecognized)/.test(message)
  if (!name || !generic) return message
  const field = index === undefined ? name : `${name}, item ${Number(index) + 1}`
  const type = ZOD_TYPE.exec(message)
  if (type) return type[2] === 'undefined' ? `${field} is required` : `${field} must be ${KIND[type[1]!] ?? type[1]}`
  return `${field}: ${message}`
}

/**
 * Thrown by zodValidator. h3's readValidatedBody turns whatever a validator throws into a 400 whose
 * `data` is that error, so the enumerable fields below become data.code and data.issues.
 */
export class InputValidationError extends Error {
  readonly code = 'invalid_input'
  readonly issues: { path: string; message: string }[]
  constructor(err: ZodError) {
    const issues = err.issues.map((i) => ({ path: i.path.join('.'), message: i.message }))
    super(issues.map((i) => issueText(i.path, i.message)).join('; '))
    this.issues = issues
  }
}

/** Validator for readValidatedBody, getValidatedQuery and getValidatedRouterParams with a zod schema. */
export function zodValidator<T>(schema: { parse: (v: unknown) => T }) {
  return (value: unknown): T => {
    try {
      return schema.parse(value)
    } catch (err) {
      if (err instanceof ZodError) throw new InputValidationError(err)
      throw err
    }
  }
}

/** Seconds a client should wait before retrying after a 503. */
export const RETRY_AFTER_S = 2

/** The one mapper from typed domain errors to HTTP errors; anything unknown is rethrown as it is. */
export function toHttpError(err: unknown): unknown {
  if (err instanceof UploadRefused) return httpError(err.status, err.code, err.message)
  if (err instanceof UnitInputError) return httpError(422, err.code, err.message)
  if (err instanceof AnalysisInputError) return httpError(422, err.code, err.message)
  if (err instanceof MaskStateError) return httpError(err.code === 'unknown_mask' ? 404 : 409, err.code, err.message)
  if (err instanceof GoldenError) return httpError(err.code === 'unknown_product' ? 404 : 422, err.code, err.message)
  if (err instanceof ProposeError) return httpError(422, err.code, err.message)
  if (err instanceof ProductConflict) return httpError(409, err.code, err.message, { field: err.field })
  if (err instanceof StationConflict) return httpError(409, err.code, err.message)
  // Nothing was stored: the station keeps its file and tries again later (or an administrator frees space).
  if (err instanceof StorageUnavailable) return httpError(507, err.code, err.message, { errno: err.errno })
  // PostgreSQL restarting or unreachable: nothing was committed, so the same upload can simply be sent again.
  if (isDatabaseUnavailable(err)) {
    return httpError(503, 'database_unavailable', 'The database is not reachable right now; try again in a few seconds', { retryAfterS: RETRY_AFTER_S })
  }
  return err
}

/** Validates a value outside h3's validated readers (e.g. a nested profile, multipart fields). @throws 400 `invalid_input` naming each field. */
export function parseInput<T>(schema: { parse: (v: unknown) => T }, value: unknown, prefix = ''): T {
  try {
    return zodValidator(schema)(value)
  } catch (err) {
    if (!(err instanceof InputValidationError)) throw err
    const issues = err.issues.map((i) => ({ ...i, path: [prefix, i.path].filter(Boolean).join('.') }))
    throw httpError(400, err.code, issues.map((i) => issueText(i.path, i.message)).join('; '), { issues })
  }
}
