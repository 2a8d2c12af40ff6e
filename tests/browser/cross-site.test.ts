/**
 * A page on another port of the same host is "same-site" for the browser, so the SameSite=Lax
 * session cookie rides along with its form posts and no-cors fetches. Such a page, opened by a
 * signed-in admin, must not be able to create an admin invitation to an outside address: the
 * server refuses every state-changing /api request whose Origin is not its own.
 */
import { createServer, type Server } from 'node:http'
import type { AddressInfo } from 'node:net'
import type { BrowserContext, Response } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { signInAs, useBrowser } from '../support/browser'
import { closeTestDb, testDb, unique } from '../support/db'

const baseUrl = inject('baseUrl')
const appOrigin = new URL(baseUrl).origin
const browser = useBrowser()
const target = new URL('/api/invitations', baseUrl).toString()

const me = new URL('/api/auth/me', baseUrl).toString()

/**
 * The other site's pages, each posting an admin invitation the way a page may without asking the
 * server first: a urlencoded form, a text/plain form whose body reads as JSON, and a no-cors fetch
 * of a JSON body without a content type (a Blob with no type). Each first reads /api/auth/me
 * (no-cors: the page cannot read the answer, the test can), which shows the browser sends the
 * session cookie along from this origin.
 */
function pages(outsider: string): Record<string, string> {
  const json = JSON.stringify({ email: outsider, role: 'admin', pad: '' }).slice(0, -2) // ends in `"pad":"`, so `name=value` closes it
  const attr = (s: string) => s.replace(/&/g, '&amp;').replace(/"/g, '&quot;')
  const probe = `fetch(${JSON.stringify(me)}, { mode: 'no-cors', credentials: 'include' })`
  const submit = `<script>${probe}.finally(() => document.getElementById('f').submit())</script>`
  return {
    '/urlencoded-form': `<!doctype html><form id="f" method="post" action="${target}"><input name="email" value="${attr(outsider)}"><input name="role" value="admin"></form>${submit}`,
    '/text-form': `<!doctype html><form id="f" method="post" enctype="text/plain" action="${target}"><input name="${attr(json)}" value='"}'></form>${submit}`,
    '/blob-fetch': `<!doctype html><script>${probe}.finally(() => fetch(${JSON.stringify(target)}, { method: 'POST', mode: 'no-cors', credentials: 'include', body: new Blob([${JSON.stringify(JSON.stringify({ email: outsider, role: 'admin' }))}]) }))</script>`,
  }
}

let other: Server
let otherOrigin: string
const routes = new Map<string, string>()

beforeAll(async () => {
  other = createServer((req, res) => {
    const html = routes.get(req.url ?? '')
    res.writeHead(html ? 200 : 404, { 'content-type': 'text/html; charset=utf-8' })
    res.end(html ?? 'not here')
  })
  await new Promise<void>((ok) => other.listen(0, '127.0.0.1', ok))
  otherOrigin = `http://127.0.0.1:${(other.address() as AddressInfo).port}`
})

afterAll(async () => {
  await new Promise((ok) => other?.close(ok))
  await closeTestDb()
})

const invitationsTo = async (email: string) => Number((await testDb()('invitations').where({ email }).count({ n: '*' }))[0]!.n)

async function signedInAdmin(): Promise<BrowserContext> {
  const context = await browser().newContext({ viewport: { width: 1366, height: 768 } })
  const page = await context.newPage()
  await signInAs(page, baseUrl, 'admin', '/dev/mailbox')
  await page.close()
  return context
}

describe('a page on another port of the same host, opened by a signed-in admin', () => {
  it.each(['/urlencoded-form', '/text-form', '/blob-fetch'])('%s: the post reaches the server with the session cookie and is refused; no invitation', async (path) => {
    const outsider = `${unique('outsider').toLowerCase()}@outside.example`
    for (const [p, html] of Object.entries(pages(outsider))) routes.set(p, html)
    const context = await signedInAdmin()
    const page = await context.newPage()
    const probed: Promise<Response> = page.waitForResponse((r) => r.url() === me)
    const answered: Promise<Response> = page.waitForResponse((r) => r.url() === target && r.request().method() === 'POST')
    await page.goto(`${otherOrigin}${path}`)
    // The browser sends the session from this origin: only the server's origin check stands in the way.
    expect((await probed).status()).toBe(200)
    const res = await answered
    expect(res.status()).toBe(403)
    expect(await invitationsTo(outsider)).toBe(0)
    await context.close()
  })

  it('the same admin, on the application itself, still invites (same origin, JSON)', async () => {
    const insider = `${unique('insider').toLowerCase()}@example.test`
    const context = await signedInAdmin()
    const page = await context.newPage()
    await page.goto(new URL('/dev/mailbox', baseUrl).toString())
    const status = await page.evaluate(async ([url, email]) => {
      const r = await fetch(url!, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email, role: 'technician' }) })
      return r.status
    }, [target, insider])
    expect(status).toBe(201)
    expect(await invitationsTo(insider)).toBe(1)
    expect(appOrigin).not.toBe(otherOrigin)
    await context.close()
  })
})
