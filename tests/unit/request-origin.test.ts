/**
 * The cross-site request guard's rule (server/utils/request-origin.ts), request by request, and its
 * list of upload routes held to the code: every route that reads multipart, and no other.
 */
import { describe, expect, it } from 'vitest'
import { UPLOAD_ROUTES, requestRefusal, type RequestFacts } from '../../server/utils/request-origin'
import { readSource, sourceFiles } from '../support/source'

const OWN = 'http://conetrail.local:3000'
const base: RequestFacts = { method: 'POST', path: '/api/products', contentType: 'application/json', hasBody: true, ownOrigins: [OWN, 'https://conetrail.example'] }
const judge = (over: Partial<RequestFacts>) => requestRefusal({ ...base, ...over })

describe('the origin of a state-changing request', () => {
  it.each([
    ['own origin', { origin: OWN }, null],
    ['own origin, written with its default port', { origin: 'https://conetrail.example:443' }, null],
    ['the public address', { origin: 'https://conetrail.example' }, null],
    ['another port of the same host', { origin: 'http://conetrail.local:3001' }, 'cross_origin'],
    ['the same host over https', { origin: 'https://conetrail.local:3000' }, 'cross_origin'],
    ['an opaque origin', { origin: 'null' }, 'cross_origin'],
    ['no Origin, same-origin fetch', { secFetchSite: 'same-origin' }, null],
    ['no Origin, typed by the person', { secFetchSite: 'none' }, null],
    ['no Origin, same-site', { secFetchSite: 'same-site' }, 'cross_origin'],
    ['no Origin, cross-site', { secFetchSite: 'cross-site' }, 'cross_origin'],
    ['neither header (a tool)', {}, null],
    ['Origin decides over Sec-Fetch-Site', { origin: 'http://evil.example', secFetchSite: 'same-origin' }, 'cross_origin'],
    ['a station token, whatever the origin', { origin: 'http://evil.example', authorization: 'Bearer abc' }, null],
    ['a station token with a form body', { authorization: 'bearer abc', contentType: 'application/x-www-form-urlencoded' }, null],
  ] as const)('%s → %s', (_, over, expected) => {
    expect(judge(over)).toBe(expected)
  })

  it.each(['GET', 'HEAD', 'OPTIONS'])('lets %s through from anywhere', (method) => {
    expect(judge({ method, origin: 'http://evil.example', contentType: 'text/plain' })).toBeNull()
  })

  it.each(['POST', 'PUT', 'PATCH', 'DELETE', 'post'])('judges %s', (method) => {
    expect(judge({ method, origin: 'http://evil.example' })).toBe('cross_origin')
  })

  it('judges only the API (pages have no state-changing routes)', () => {
    expect(judge({ path: '/login', origin: 'http://evil.example' })).toBeNull()
    expect(judge({ path: '/api', origin: 'http://evil.example' })).toBe('cross_origin')
    expect(judge({ path: '/apiary', origin: 'http://evil.example' })).toBeNull()
  })
})

describe('the body of a state-changing request', () => {
  it.each([
    ['application/json', true, null],
    ['Application/JSON; charset=utf-8', true, null],
    ['application/x-www-form-urlencoded', true, 'unsupported_media_type'],
    ['text/plain;charset=UTF-8', true, 'unsupported_media_type'],
    ['multipart/form-data; boundary=x', true, 'unsupported_media_type'],
    ['application/json-patch+json', true, 'unsupported_media_type'],
    [undefined, true, 'unsupported_media_type'],
    [undefined, false, null],
    ['text/plain', false, 'unsupported_media_type'],
  ] as const)('%s (body: %s) → %s', (contentType, hasBody, expected) => {
    expect(judge({ origin: OWN, contentType, hasBody })).toBe(expected)
  })

  it('leaves upload routes to their own multipart reader, origin still judged', () => {
    for (const path of ['/api/recordings', '/api/returns/12/retest', '/api/returns/12/attachments']) {
      expect(judge({ path, origin: OWN, contentType: 'multipart/form-data; boundary=x' })).toBeNull()
      expect(judge({ path, origin: OWN, contentType: 'text/plain' })).toBeNull()
      expect(judge({ path, origin: 'http://conetrail.local:3001', contentType: 'multipart/form-data; boundary=x' })).toBe('cross_origin')
    }
    expect(judge({ path: '/api/returns/12/close', origin: OWN, contentType: 'multipart/form-data; boundary=x' })).toBe('unsupported_media_type')
  })
})

describe('the list of upload routes', () => {
  /** A route file's URL with a dummy 1 for each parameter (`[id]` → 1). */
  const urlOf = (file: string) => `/${file.replace(/^server\//, '').replace(/\.(get|post|put|patch|delete)\.ts$/, '').replace(/\/index$/, '').replace(/\[[^\]]+\]/g, '1')}`
  const routes = sourceFiles(['server/api'], /\.(post|put|patch|delete)\.ts$/)

  it('holds every route that reads multipart, and no route that reads JSON', () => {
    const uploads = routes.filter((f) => readSource(f).includes('readMultipartUpload(')).map(urlOf)
    expect(uploads).toContain('/api/recordings')
    expect(uploads.length).toBeGreaterThanOrEqual(3)
    const listed = (url: string) => UPLOAD_ROUTES.some((r) => r.test(url))
    expect(uploads.filter((u) => !listed(u))).toEqual([])
    expect(routes.map(urlOf).filter((u) => listed(u) && !uploads.includes(u))).toEqual([])
  })
})
