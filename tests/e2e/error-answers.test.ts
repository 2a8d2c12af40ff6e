/**
 * The real server answers every error through the one error hook: `{ statusCode, message, data: { code } }`
 * with the code's status from shared/utils/error-codes.ts, also for errors no route raised itself.
 */
import { fetch } from '@nuxt/test-utils/e2e'
import { describe, expect, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { ERROR_CODES } from '../../shared/utils/error-codes'
import type { ApiErrorBody } from '../../shared/types/api'
import { signIn, useTestServer } from '../support/app'

const host = await useTestServer()

async function answer(res: Response): Promise<[number, ApiErrorBody]> {
  return [res.status, (await res.json()) as ApiErrorBody]
}

const post = (path: string, body: string, cookie = '') =>
  fetch(path, { method: 'POST', headers: { 'content-type': 'application/json', accept: 'application/json', cookie }, body })

describe('error answers', () => {
  it.each(['/api/no-such-thing', '/api', '/api/'])('gives an API path that does not exist (%s) 404 not_found', async (path) => {
    const [status, body] = await answer(await fetch(path, { headers: { accept: 'application/json' }, redirect: 'manual' }))
    expect([status, body.statusCode, body.data.code]).toEqual([404, 404, 'not_found'])
  })

  it.each([
    ['GET', '/api/auth/login'],
    ['DELETE', '/api/auth/login'],
    ['PUT', '/api/products'],
  ])('gives %s %s, a method no route serves there, 405 method_not_allowed (not a page, not a redirect)', async (method, path) => {
    const res = await fetch(path, { method, headers: { accept: 'application/json' }, redirect: 'manual' })
    expect(res.headers.get('content-type')).toMatch(/json/)
    const [status, body] = await answer(res)
    expect([status, body.data.code]).toEqual([405, 'method_not_allowed'])
  })

  it('gives a body that is not JSON 400 bad_request', async () => {
    const [status, body] = await answer(await post('/api/auth/login', '{"email": '))
    expect([status, body.data.code]).toEqual([400, 'bad_request'])
  })

  it('names each refused field under 400 invalid_input', async () => {
    const [status, body] = await answer(await post('/api/auth/login', JSON.stringify({ email: 'not-an-address' })))
    expect([status, body.data.code]).toEqual([400, 'invalid_input'])
    expect(body.data.issues!.map((i) => i.path).sort()).toEqual(['email', 'password'])
    expect(body.message).not.toMatch(/\[object|undefined/)
  })

  it('answers a guard, a service and a repo refusal with the status of their code', async () => {
    const [unauth, unauthBody] = await answer(await fetch('/api/masks', { headers: { accept: 'application/json' } }))
    expect([unauth, unauthBody.data.code]).toEqual([ERROR_CODES.unauthenticated.status, 'unauthenticated'])

    const tech = await signIn(host, demoEmail('technician'), DEMO_PASSWORD)
    const [forbidden, forbiddenBody] = await answer(await fetch('/api/masks/1/release', { method: 'POST', headers: { accept: 'application/json', cookie: tech.cookie } }))
    expect([forbidden, forbiddenBody.data.code]).toEqual([ERROR_CODES.forbidden.status, 'forbidden'])

    const engineer = await signIn(host, demoEmail('engineer'), DEMO_PASSWORD)
    const [missing, missingBody] = await answer(await post('/api/masks/999999/release', JSON.stringify({ comment: 'checked on the line' }), engineer.cookie))
    expect([missing, missingBody.data.code]).toEqual([ERROR_CODES.unknown_mask.status, 'unknown_mask'])
    const [product, productBody] = await answer(await fetch('/api/products/NO-SUCH-PRODUCT', { headers: { accept: 'application/json', cookie: engineer.cookie } }))
    expect([product, productBody.data.code]).toEqual([404, 'product_not_found'])
  })

  it('says nothing of which invitation tokens exist beyond its code (404 invitation_unknown)', async () => {
    const [status, body] = await answer(await fetch('/api/invitations/accept/Zm9vYmFyYmF6cXV4MTIzNDU2Nzg5MGFiY2RlZmdoaWp', { headers: { accept: 'application/json' } }))
    expect([status, body.data.code]).toEqual([404, 'invitation_unknown'])
  })
})
