/**
 * One way to fail: every code any layer can throw is in the one table with a status and a message,
 * and the one map (errorAnswer) turns each kind of error into the answer a station or a form reads.
 */
import { createError } from 'h3'
import { z } from 'zod'
import { describe, expect, it } from 'vitest'
import { readSource, sourceFiles } from '../support/source'
import { ERROR_CODES, codeForStatus, isErrorCode } from '../../shared/utils/error-codes'
import { DomainError } from '../../shared/utils/domain-error'
import { ANALYSIS_ERROR_CODES, AnalysisInputError } from '../../server/analysis/errors'
import { STATS_ERROR_CODES } from '../../server/stats/errors'
import { PROPOSE_ERROR_CODES } from '../../server/limits/propose'
import { PEOPLE_ERROR_CODES } from '../../server/services/people'
import { CERTIFICATE_ERROR_CODES } from '../../server/services/units'
import { UPLOAD_REFUSAL_CODES } from '../../server/services/ingest'
import { GOLDEN_ERROR_CODES, RELEASE_ERROR_CODES } from '../../server/services/masks'
import { RETURN_ERROR_CODES } from '../../server/services/returns'
import { REFERENCE_ERROR_CODES } from '../../server/services/reference-units'
import { STATION_CHECK_ERROR_CODES } from '../../server/services/station-checks'
import { UNIT_INPUT_ERROR_CODES } from '../../server/repos/units'
import { MASK_STATE_ERROR_CODES } from '../../server/repos/masks'
import { INVITATION_ERROR_CODES } from '../../server/repos/invitations'
import { PRODUCT_CONFLICT_CODES, ProductConflict } from '../../server/repos/products'
import { StationConflict } from '../../server/repos/stations'
import { MAIL_ERROR_CODES } from '../../server/mail/index'
import { REQUEST_ORIGIN_ERROR_CODES } from '../../server/utils/request-origin'
import { StorageUnavailable } from '../../server/storage/recordings'
import { ConfigError } from '../../server/utils/config'
import { InputValidationError, RETRY_AFTER_S, errorAnswer, loggablePath, zodValidator } from '../../server/utils/errors'

const CODE_LISTS: Record<string, readonly string[]> = {
  'engine (server/analysis/errors.ts)': ANALYSIS_ERROR_CODES,
  'statistics (server/stats/errors.ts)': STATS_ERROR_CODES,
  'mask proposal (server/limits/propose.ts)': PROPOSE_ERROR_CODES,
  'people service': PEOPLE_ERROR_CODES,
  'certificates (units service)': CERTIFICATE_ERROR_CODES,
  'uploads (ingest service)': UPLOAD_REFUSAL_CODES,
  'golden units (masks service)': GOLDEN_ERROR_CODES,
  'mask release (masks service)': RELEASE_ERROR_CODES,
  'returns service': RETURN_ERROR_CODES,
  'reference units service': REFERENCE_ERROR_CODES,
  'station checks service': STATION_CHECK_ERROR_CODES,
  'units repo': UNIT_INPUT_ERROR_CODES,
  'masks repo': MASK_STATE_ERROR_CODES,
  'invitations repo': INVITATION_ERROR_CODES,
  'products repo': PRODUCT_CONFLICT_CODES,
  'mail': MAIL_ERROR_CODES,
  'request origin guard (server/utils/request-origin.ts)': REQUEST_ORIGIN_ERROR_CODES,
  'single-code errors': [new StationConflict('x').code, new StorageUnavailable('ENOSPC', 'x').code, new ConfigError('x').code, 'invalid_input'],
}

/** `new <a domain error class>('code'`: the classes that extend DomainError. */
const DOMAIN_THROW = /new (?:DomainError|AnalysisInputError|StatsError|ProposeError|PeopleError|CertificateError|UploadRefused|GoldenError|ReleaseRiskError|ReturnError|UnitInputError|MaskStateError|InvitationError|ProductConflict|MailError)\(\s*'([a-z_]+)'/g

const SERVER_FILES = sourceFiles(['server', 'workers'])

describe('the one table of error codes', () => {
  it.each(Object.entries(CODE_LISTS))('gives every code of the %s a status and a message', (_, codes) => {
    expect(codes.length).toBeGreaterThan(0)
    for (const code of codes) {
      expect(isErrorCode(code), code).toBe(true)
      const entry = ERROR_CODES[code as keyof typeof ERROR_CODES]
      expect(Number.isInteger(entry.status) && entry.status >= 400 && entry.status <= 599, code).toBe(true)
      expect(entry.message.trim().length, code).toBeGreaterThan(5)
    }
  })

  it('holds every code the server throws by name (a literal code outside the table would answer 500)', () => {
    const thrown = new Set<string>()
    for (const file of SERVER_FILES) {
      for (const m of readSource(file).matchAll(DOMAIN_THROW)) thrown.add(m[1]!)
    }
    expect(thrown.size).toBeGreaterThan(30)
    expect([...thrown].filter((c) => !isErrorCode(c))).toEqual([])
  })

  it('names a fallback code for every status an answer can have without one', () => {
    expect([400, 401, 403, 404, 405, 413, 415, 429, 500, 502].map(codeForStatus)).toEqual([
      'bad_request', 'unauthenticated', 'forbidden', 'not_found', 'method_not_allowed', 'too_large', 'not_multipart', 'rate_limited', 'internal_error', 'internal_error',
    ])
  })
})

describe('errorAnswer: the one map from an error to its answer', () => {
  // What h3 does with an error a handler throws: wraps it, unhandled, with the error as its cause.
  const wrapped = (err: Error) => Object.assign(createError(err), { unhandled: true })

  it.each([
    ['an engine refusal', new AnalysisInputError('clipped', 'Channel 1 is clipped'), 422, { code: 'clipped' }],
    ['an empty file (engine)', new AnalysisInputError('empty_file', 'The file is empty'), 400, { code: 'empty_file' }],
    ['a product conflict with its field', new ProductConflict('product_in_use', 'Units exist', 'ratedImpedanceOhm'), 409, { code: 'product_in_use', field: 'ratedImpedanceOhm' }],
    ['a full store with its errno', new StorageUnavailable('ENOSPC', 'The store is full'), 507, { code: 'storage_unavailable', errno: 'ENOSPC' }],
    ['a guard refusal', new DomainError('forbidden', 'This needs the engineer role'), 403, { code: 'forbidden' }],
  ])('answers %s with its code’s status, message and details', (_, err, status, data) => {
    for (const thrown of [err, wrapped(err)]) {
      const answer = errorAnswer(thrown as never)
      expect(answer.statusCode).toBe(status)
      expect(answer.message).toBe(err.message)
      expect(answer.data).toEqual(data)
      expect(answer.requestId).toBeUndefined()
    }
  })

  it('answers a validator’s refusal (inside h3’s 400) as invalid_input with each issue', () => {
    let caught: unknown
    try {
      zodValidator(z.object({ serial: z.string().min(3, 'serial must have at least 3 characters') }))({ serial: 'x' })
    } catch (err) {
      caught = err
    }
    expect(caught).toBeInstanceOf(InputValidationError)
    // h3's readValidatedBody: createError({ status: 400, statusMessage: 'Validation Error', message, data: error }).
    const h3 = createError({ status: 400, statusMessage: 'Validation Error', message: (caught as Error).message, data: caught })
    const answer = errorAnswer(h3)
    expect(answer.statusCode).toBe(400)
    expect(answer.data).toEqual({ code: 'invalid_input', issues: [{ path: 'serial', message: 'serial must have at least 3 characters' }] })
  })

  it('answers an unreachable database 503 database_unavailable with Retry-After', () => {
    // SQLSTATE 57P01 admin_shutdown (PostgreSQL manual, appendix "PostgreSQL Error Codes").
    const pg = Object.assign(new Error('terminating connection due to administrator command'), { code: '57P01' })
    const answer = errorAnswer(wrapped(pg) as never)
    expect([answer.statusCode, answer.data.code, answer.data.retryAfterS, answer.headers['retry-after']]).toEqual([503, 'database_unavailable', RETRY_AFTER_S, RETRY_AFTER_S])
  })

  it('gives an h3 error without a code one by its status, keeping its words', () => {
    const answer = errorAnswer(createError({ statusCode: 404, message: 'Page not found: /nowhere' }))
    expect([answer.statusCode, answer.message, answer.data.code]).toEqual([404, 'Page not found: /nowhere', 'not_found'])
  })

  it('answers anything unexpected 500 internal_error with a request id, never its own words', () => {
    const answer = errorAnswer(wrapped(new TypeError("Cannot read properties of undefined (reading 'password_hash')")) as never)
    expect(answer.statusCode).toBe(500)
    expect(answer.data.code).toBe('internal_error')
    expect(answer.requestId).toMatch(/^[0-9a-f-]{36}$/)
    expect(answer.data.requestId).toBe(answer.requestId)
    expect(answer.headers['x-request-id']).toBe(answer.requestId)
    expect(answer.message).toContain(answer.requestId!)
    expect(answer.message).not.toContain('password_hash')
  })
})

describe('the error log', () => {
  it.each([
    ['/api/invitations/accept/Zm9vYmFyYmF6cXV4MTIzNDU2Nzg5MA', '/api/invitations/accept/…'],
    ['/invite/AbCdEfGhIjKlMnOpQrStUvWxYzAbCdEfGhIjKlMnOpQ', '/invite/…'],
    ['/api/recordings?token=ct_abcdef0123456789abcdef&limit=1', '/api/recordings'],
    ['/api/units/WF8-2412-00017', '/api/units/WF8-2412-00017'],
    ['/api/masks/12/release', '/api/masks/12/release'],
  ])('logs %s as %s (no query, no token)', (path, logged) => {
    expect(loggablePath(path)).toBe(logged)
  })
})

describe('one place maps errors', () => {
  it('has no route that catches an error (only an upload’s finally that removes its temp file)', () => {
    const routes = SERVER_FILES.filter((f) => f.startsWith('server/api/'))
    expect(routes.length).toBeGreaterThan(50)
    const catching = routes.filter((f) => /\bcatch\s*[({]|\.catch\(/.test(readSource(f)))
    expect(catching).toEqual([])
    const tries = routes.filter((f) => /\btry\s*\{/.test(readSource(f)))
    for (const f of tries) expect(readSource(f), f).toMatch(/finally \{\n\s*if \(file\) await rm\(file\.path/)
  })

  it('builds HTTP errors nowhere but in the error map', () => {
    const building = SERVER_FILES.filter((f) => /\bcreateError\(|\bstatusCode:\s*\d/.test(readSource(f)))
    expect(building).toEqual([])
  })

  it('keeps HTTP statuses out of domain errors (no `status` field, no status argument)', () => {
    const offenders = SERVER_FILES.filter((f) => /new \w*(?:Error|Refused|Conflict)\(\s*\d{3}\b|readonly status\b/.test(readSource(f)))
    expect(offenders).toEqual([])
  })
})

describe('a route reads guard → validated input → one call → answer', () => {
  // The session cookie (sign-in, sign-out), a password hashed with the sign-in module's settings and
  // the station an upload names are the HTTP side of a request, not the work: they may stand beside
  // the one call.
  const HTTP_SIDE = new Set(['requireRole', 'requireActor', 'requireUserOrStation', 'getValidatedRouterParams', 'getValidatedQuery', 'readValidatedBody', 'readMultipartUpload', 'getUserSession', 'startSession', 'endSession', 'hashPassword', 'chosenStation', 'useBoss', 'rm'])

  it('makes at most one awaited call into a service or repo', () => {
    const routes = SERVER_FILES.filter((f) => f.startsWith('server/api/'))
    const busy = routes
      .map((f) => [f, [...readSource(f).matchAll(/await (\w+)\(/g)].map((m) => m[1]!).filter((n) => !HTTP_SIDE.has(n))] as const)
      .filter(([, calls]) => calls.length > 1)
    expect(busy).toEqual([])
  })
})

