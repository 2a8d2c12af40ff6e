/**
 * Cross-site request forgery guard for the API (run on every request by
 * server/middleware/01.request-origin.ts). SameSite=Lax keeps the session cookie off requests
 * from other sites, but a page on another port of the same host is the same *site*: its form
 * posts and no-cors fetches carry the cookie. So a request that changes something must come from
 * our own origin, and its body must be of a type only our own pages (or tools) send.
 */
import { getRequestHeader, type H3Event } from 'h3'
import { DomainError } from '../../shared/utils/domain-error'
import type { ErrorCode } from '../../shared/utils/error-codes'

/** What the guard refuses. */
export const REQUEST_ORIGIN_ERROR_CODES = ['cross_origin', 'unsupported_media_type'] as const satisfies readonly ErrorCode[]
export type RequestRefusal = (typeof REQUEST_ORIGIN_ERROR_CODES)[number]

/** Methods that change nothing (a route never changes data on them). */
const READ_METHODS = new Set(['GET', 'HEAD', 'OPTIONS'])

/**
 * Routes whose body is multipart/form-data: every route that calls readMultipartUpload (a unit test
 * holds this list to the code). Their own reader refuses any other type with 415 `not_multipart`,
 * after the route's guard; every other route reads JSON.
 */
export const UPLOAD_ROUTES: readonly RegExp[] = [
  /^\/api\/recordings\/?$/,
  /^\/api\/returns\/[^/]+\/retest\/?$/,
  /^\/api\/returns\/[^/]+\/attachments\/?$/,
]

/** What the guard reads of a request (headers by their lower-case names; absent: undefined). */
export interface RequestFacts {
  method: string
  path: string
  origin?: string
  secFetchSite?: string
  authorization?: string
  contentType?: string
  /** Whether the request carries a body (a Content-Length above 0, or a Transfer-Encoding). */
  hasBody: boolean
  /** The origins this application is reached at. */
  ownOrigins: readonly string[]
}

/** An origin as the browser writes it (`scheme://host[:port]`), or the text as it came when it is none ("null"). */
function normalOrigin(text: string): string {
  try {
    return new URL(text).origin
  } catch {
    return text.trim().toLowerCase()
  }
}

/**
 * Why a request is refused, or null to let it through. Only state-changing requests under /api
 * are judged:
 * - a station's bearer token passes untouched (a page on another site cannot send that header
 *   without the server's leave, which it never gives);
 * - `Origin`, when present, must be one of ours; without it, `Sec-Fetch-Site` (when present) must
 *   be `same-origin` or `none` (typed by the person). Tools that send neither (curl, scripts) pass;
 * - the body must be JSON (`application/json`, any parameters); a request without a content type
 *   must have no body (sign-out, release). Upload routes take multipart and judge it themselves.
 */
export function requestRefusal(r: RequestFacts): RequestRefusal | null {
  if (READ_METHODS.has(r.method.toUpperCase())) return null
  const path = r.path.split('?')[0]!
  if (path !== '/api' && !path.startsWith('/api/')) return null
  if (/^bearer\s/i.test(r.authorization ?? '')) return null
  if (r.origin !== undefined) {
    if (!r.ownOrigins.includes(normalOrigin(r.origin))) return 'cross_origin'
  } else if (r.secFetchSite !== undefined && !['same-origin', 'none'].includes(r.secFetchSite.trim().toLowerCase())) {
    return 'cross_origin'
  }
  if (UPLOAD_ROUTES.some((route) => route.test(path))) return null
  const type = r.contentType?.split(';')[0]!.trim().toLowerCase()
  if (!type) return r.hasBody ? 'unsupported_media_type' : null
  return type === 'application/json' ? null : 'unsupported_media_type'
}

/**
 * Judges the request (requestRefusal); `ownOrigins` is asked only for a state-changing one.
 * @throws 403 `cross_origin`, 415 `unsupported_media_type`.
 */
export function guardRequestOrigin(event: H3Event, ownOrigins: (event: H3Event) => string[]): void {
  if (READ_METHODS.has(event.method)) return
  const header = (name: string) => getRequestHeader(event, name) || undefined
  const refusal = requestRefusal({
    method: event.method,
    path: event.path,
    origin: header('origin'),
    secFetchSite: header('sec-fetch-site'),
    authorization: header('authorization'),
    contentType: header('content-type'),
    hasBody: Number(header('content-length') ?? 0) > 0 || header('transfer-encoding') !== undefined,
    ownOrigins: ownOrigins(event),
  })
  if (refusal === 'cross_origin') {
    throw new DomainError('cross_origin', 'Changes are taken only from Conetrail\'s own pages: this request came from another origin')
  }
  if (refusal === 'unsupported_media_type') {
    throw new DomainError('unsupported_media_type', 'Send the body as JSON (Content-Type: application/json)')
  }
}
