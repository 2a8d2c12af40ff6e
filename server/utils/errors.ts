import { STATUS_CODES } from 'node:http'
import { randomUUID } from 'node:crypto'
import { setResponseHeader, type H3Error, type H3Event } from 'h3'
import { ZodError } from 'zod'
import { DomainError } from '../../shared/utils/domain-error'
import { ERROR_CODES, codeForStatus, isErrorCode, type ErrorCode } from '../../shared/utils/error-codes'
import { CONTROL_CHARACTER_MESSAGE } from '../../shared/utils/input'
import { isDatabaseUnavailable } from './db'

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
  if (!name || (!generic && message !== CONTROL_CHARACTER_MESSAGE)) return message
  const field = index === undefined ? name : `${name}, item ${Number(index) + 1}`
  if (message === CONTROL_CHARACTER_MESSAGE) return `${field} ${message}`
  const type = ZOD_TYPE.exec(message)
  if (type) return type[2] === 'undefined' ? `${field} is required` : `${field} must be ${KIND[type[1]!] ?? type[1]}`
  return `${field}: ${message}`
}

/** One field's refusal: the path in the input and the schema's message. */
export interface InputIssue {
  path: string
  message: string
}

/**
 * Thrown by zodValidator and parseInput: 400 `invalid_input` with `issues` in the answer's data.
 * (h3's validated readers wrap whatever a validator throws in a 400 whose `data` is this error; the
 * error hook finds it there.)
 */
export class InputValidationError extends DomainError<'invalid_input'> {
  readonly issues: InputIssue[]
  /** `prefix` names where the validated value sits in the request (e.g. `profile`). */
  constructor(err: ZodError, prefix = '') {
    const issues = err.issues.map((i) => ({ path: [prefix, i.path.join('.')].filter(Boolean).join('.'), message: i.message }))
    super('invalid_input', issues.map((i) => issueText(i.path, i.message)).join('; '), { issues })
    this.issues = issues
  }
}

/** Validator for readValidatedBody, getValidatedQuery and getValidatedRouterParams with a zod schema. */
export function zodValidator<T>(schema: { parse: (v: unknown) => T }) {
  return (value: unknown): T => parseInput(schema, value)
}

/** Seconds a client should wait before retrying after a 503. */
export const RETRY_AFTER_S = 2

/** Validates a value outside h3's validated readers (a nested profile, multipart fields). @throws InputValidationError naming each field under `prefix`. */
export function parseInput<T>(schema: { parse: (v: unknown) => T }, value: unknown, prefix = ''): T {
  try {
    return schema.parse(value)
  } catch (err) {
    if (err instanceof ZodError) throw new InputValidationError(err, prefix)
    throw err
  }
}

/** The domain error behind an error h3 caught: the error itself, its cause, or a validator's error in its data. */
function domainErrorOf(error: unknown): DomainError | undefined {
  const e = error as { cause?: unknown; data?: unknown } | undefined
  for (const candidate of [error, e?.cause, e?.data]) {
    if (candidate instanceof DomainError && isErrorCode(candidate.code)) return candidate
  }
  return undefined
}

/** A path segment this long is a token or a link's secret, never a name a person typed (serials are shorter by habit). */
const OPAQUE_SEGMENT_LENGTH = 24
/** What a route name, an id, a serial or a lot code looks like in a path; anything else is not logged. */
const PLAIN_SEGMENT = new RegExp(`^[A-Za-z0-9._:~-]{0,${OPAQUE_SEGMENT_LENGTH - 1}}$`)

/**
 * A request path fit for the log: the query and fragment are dropped and any segment that is not
 * short plain text is cut (a long opaque one is an invitation link's or a token's secret; an encoded
 * `?`, `;` or `=` can smuggle a query into the path), so a secret in a URL never reaches the log.
 */
export function loggablePath(path: string): string {
  return path
    .split(/[?#]/)[0]!
    .split('/')
    .map((seg) => (PLAIN_SEGMENT.test(seg) ? seg : '…'))
    .join('/')
}

/** A run of characters that is a token, a key or a hash (base64, base64url, hex) and never words. */
const OPAQUE_RUN = new RegExp(`[A-Za-z0-9_+=-]{${OPAQUE_SEGMENT_LENGTH},}`, 'g')
/** The query of any URL quoted in a message (a fetch error names the URL it asked). */
const QUERY_IN_TEXT = /\?[^\s"'`]+/g

function scrubbed(text: string): string {
  return text.replace(QUERY_IN_TEXT, '?…').replace(OPAQUE_RUN, '…')
}

/**
 * An unexpected error as one log entry without secrets: its name, code and message (and a database
 * error's detail) with queries and token-like runs cut, then its stack frames, which name code and
 * never data, and the same for what caused it. The database layer is told not to put the values
 * of a failed query into its message (knexfile.ts, `compileSqlOnError: false`); this is the net
 * behind it.
 */
export function loggableError(err: unknown, depth = 0): string {
  if (!(err instanceof Error)) return scrubbed(String(err))
  const e = err as Error & { code?: unknown; detail?: unknown }
  const code = typeof e.code === 'string' || typeof e.code === 'number' ? ` [${e.code}]` : ''
  const lines = [`${e.name}${code}: ${scrubbed(e.message)}`]
  if (typeof e.detail === 'string') lines.push(`  detail: ${scrubbed(e.detail)}`)
  lines.push(...(e.stack ?? '').split('\n').filter((l) => /^\s+at /.test(l)))
  if (e.cause !== undefined && depth < 3) lines.push(`  caused by ${loggableError(e.cause, depth + 1)}`)
  return lines.join('\n')
}

/** What an error answer carries, decided once for every route (the hook in server/plugins/00.errors.ts applies it). */
export interface ErrorAnswer {
  statusCode: number
  message: string
  data: { code: ErrorCode } & Record<string, unknown>
  headers: Record<string, string | number>
  /** Set for an error nobody expected: logged with this id, quoted in the answer. */
  requestId?: string
}

/** A code's answer; `retryAfterS` in the details (a sign-in limit, an unreachable database) becomes the Retry-After header too. */
function coded(code: ErrorCode, message: string, details: Record<string, unknown> = {}): ErrorAnswer {
  const data: ErrorAnswer['data'] = code === 'database_unavailable' ? { ...details, code, retryAfterS: RETRY_AFTER_S } : { ...details, code }
  const headers: Record<string, string | number> = typeof data.retryAfterS === 'number' ? { 'retry-after': data.retryAfterS } : {}
  return { statusCode: ERROR_CODES[code].status, message, data, headers }
}

/**
 * The one map from an error to its answer:
 * - a domain error (engine, repos, services, guards: a code from the one table) answers its code's
 *   status with `{ code, ...details }`;
 * - an unreachable database (PostgreSQL restarting) answers 503 `database_unavailable`: nothing was
 *   committed, so the same request can simply be sent again;
 * - an h3 error below 500 (an unknown path, a body that is not JSON) keeps its status and gets a
 *   code by its status when it has none;
 * - anything else is 500 `internal_error` with a request id, and never its own words.
 */
export function errorAnswer(error: H3Error): ErrorAnswer {
  const domain = domainErrorOf(error)
  if (domain) return coded(domain.code, domain.message, domain.details)
  if (isDatabaseUnavailable(error.cause ?? error)) return coded('database_unavailable', ERROR_CODES.database_unavailable.message)
  const status = error.statusCode ?? 500
  if (status < 500 && !error.unhandled) {
    const data = error.data && typeof error.data === 'object' ? (error.data as Record<string, unknown>) : {}
    const code = isErrorCode(data.code) ? data.code : codeForStatus(status)
    return { statusCode: status, message: error.message || ERROR_CODES[code].message, data: { ...data, code }, headers: {} }
  }
  const requestId = randomUUID()
  const answer = coded('internal_error', `${ERROR_CODES.internal_error.message}; quote request ${requestId} when you report it`, { requestId })
  return { ...answer, headers: { 'x-request-id': requestId }, requestId }
}

/**
 * Rewrites the error h3 is about to answer (Nitro calls its error hooks before it renders the
 * answer, synchronously up to the first await, so changing the error here changes the answer).
 * An unexpected error is logged here, once, with its request id, the method and a path without
 * query or tokens; it is marked handled so that Nitro does not log the raw URL itself.
 */
export function shapeErrorAnswer(error: H3Error, event: H3Event): void {
  try {
    const answer = errorAnswer(error)
    if (answer.requestId) {
      console.error(`[request error] request ${answer.requestId} ${event.method} ${loggablePath(event.path)}: ${loggableError(error.cause ?? error)}`)
    }
    error.statusCode = answer.statusCode
    error.statusMessage = STATUS_CODES[answer.statusCode] ?? 'Error'
    error.message = answer.message
    error.data = answer.data
    for (const [name, value] of Object.entries(answer.headers)) setResponseHeader(event, name, value)
  } finally {
    // Whatever happened above, Nitro's own handler must not log the error with the raw URL
    // (query and tokens included): it does so for an unhandled or fatal error.
    error.unhandled = false
    error.fatal = false
  }
}
