import { readdirSync, readFileSync } from 'node:fs'
import { join, resolve } from 'node:path'
import { fetch } from '@nuxt/test-utils/e2e'
import { describe, expect, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { useTestServer } from '../support/app'

await useTestServer()
const root = resolve(import.meta.dirname, '../..')

function csp(res: Response): Map<string, string[]> {
  const header = res.headers.get('content-security-policy') ?? ''
  return new Map(header.split(';').map((d) => d.trim()).filter(Boolean).map((d) => { const [name, ...values] = d.split(/\s+/); return [name!, values] }))
}

describe('security headers and content security policy', () => {
  it('a page: scripts only with this response’s nonce, no framing, no sniffing, no referrer', async () => {
    const res = await fetch('/login')
    expect(res.status).toBe(200)
    const html = await res.text()
    const policy = csp(res)
    const scripts = policy.get('script-src') ?? []
    const nonce = scripts.find((s) => s.startsWith("'nonce-"))?.slice(7, -1)
    expect(nonce).toMatch(/^[A-Za-z0-9+/=_-]{16,}$/)
    expect(scripts).toContain("'strict-dynamic'")
    expect(scripts).not.toContain("'unsafe-inline'")
    expect(scripts).not.toContain('https:')
    expect(policy.get('object-src')).toEqual(["'none'"])
    expect(policy.get('base-uri')).toEqual(["'none'"])
    expect(policy.get('frame-ancestors')).toEqual(["'none'"])
    expect(policy.get('default-src')).toEqual(["'self'"])
    // Served over plain http on a factory network: URLs must not be rewritten to https.
    expect(policy.has('upgrade-insecure-requests')).toBe(false)
    // Every script tag of the page carries the nonce, so Nuxt's own scripts run.
    const tags = html.match(/<script\b[^>]*>/g) ?? []
    expect(tags.length).toBeGreaterThan(0)
    for (const tag of tags) expect(tag).toContain(`nonce="${nonce}"`)
    // A fresh nonce on every response.
    const again = csp(await fetch('/login')).get('script-src')
    expect(again).not.toContain(`'nonce-${nonce}'`)

    expect(res.headers.get('x-frame-options')).toBe('DENY')
    expect(res.headers.get('x-content-type-options')).toBe('nosniff')
    expect(res.headers.get('referrer-policy')).toBe('no-referrer')
    expect(res.headers.get('cross-origin-opener-policy')).toBe('same-origin')
    expect(res.headers.get('x-powered-by')).toBeNull()
  })

  it('API answers carry the headers too, and no cross-origin caller is allowed', async () => {
    const res = await fetch('/api/health', { headers: { origin: 'http://elsewhere.example' } })
    expect(res.headers.get('x-content-type-options')).toBe('nosniff')
    expect(res.headers.get('access-control-allow-origin')).toBeNull()
  })

  it('limits JSON bodies (2 MB) but lets uploads reach the upload limit of their own (413 too_large)', async () => {
    const big = await fetch('/api/auth/login', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email: 'a@b.test', password: 'x'.repeat(2_100_000) }) })
    expect(big.status).toBe(413)
    // 8.5 MB of multipart: above nuxt-security's default upload limit (8 MB) and the test server's
    // CONETRAIL_MAX_UPLOAD_MB=8 (8 MiB = 8 388 608 bytes): our own limiter answers, with its code.
    const form = new FormData()
    form.set('serial', 'TOO-BIG-1')
    form.set('file', new Blob([new Uint8Array(8_500_000)]), 'big.wav')
    const { cookie } = await signInCookie()
    const upload = await fetch('/api/recordings', { method: 'POST', headers: { cookie }, body: form })
    expect(upload.status).toBe(413)
    expect(((await upload.json()) as { data: { code: string } }).data.code).toBe('too_large')
    // The same through a route with a parameter (a return's retest, as support).
    const support = await signInCookie({}, demoEmail('support'))
    const retest = await fetch('/api/returns/1/retest', { method: 'POST', headers: { cookie: support.cookie }, body: form })
    expect(retest.status).toBe(413)
    expect(((await retest.json()) as { data: { code: string } }).data.code).toBe('too_large')
  })
})

async function signInCookie(extra: Record<string, string> = {}, email = demoEmail('technician')) {
  const res = await fetch('/api/auth/login', { method: 'POST', headers: { 'content-type': 'application/json', ...extra }, body: JSON.stringify({ email, password: DEMO_PASSWORD }) })
  expect(res.status).toBe(200)
  const set = res.headers.getSetCookie().find((c) => c.startsWith('nuxt-session=') && !/nuxt-session=;/.test(c))!
  return { cookie: set.split(';')[0]!, set }
}

describe('the session cookie', () => {
  it('is HttpOnly and SameSite=Lax, lasts one shift (12 h), and is not Secure over plain http', async () => {
    const { set } = await signInCookie()
    expect(set).toMatch(/;\s*HttpOnly/i)
    expect(set).toMatch(/;\s*SameSite=Lax/i)
    expect(set).not.toMatch(/;\s*Secure/i)
    const expires = new Date(/Expires=([^;]+)/i.exec(set)![1]!).getTime()
    expect(Math.abs(expires - (Date.now() + 12 * 3600_000))).toBeLessThan(120_000)
  })

  it('is Secure when the request came over https (through the trusted proxy here)', async () => {
    const { set } = await signInCookie({ 'x-forwarded-proto': 'https' })
    expect(set).toMatch(/;\s*Secure/i)
  })
})

describe('the code itself', () => {
  const files = (dir: string, ext: string): string[] =>
    readdirSync(join(root, dir), { recursive: true, withFileTypes: true })
      .filter((d) => d.isFile() && d.name.endsWith(ext))
      .map((d) => join(d.parentPath, d.name))

  it('renders no HTML from data: no v-html in any page, layout or component', () => {
    const vue = [...files('pages', '.vue'), ...files('components', '.vue'), ...files('layouts', '.vue'), join(root, 'app.vue'), join(root, 'error.vue')]
    expect(vue.length).toBeGreaterThan(20)
    expect(vue.filter((f) => /\bv-html\b|innerHTML/.test(readFileSync(f, 'utf8'))).map((f) => f.slice(root.length + 1))).toEqual([])
  })

  it('lets every upload route (readMultipartUpload) past the fixed body limit, so its own limit answers', () => {
    const config = readFileSync(join(root, 'nuxt.config.ts'), 'utf8')
    const uploads = files('server/api', '.ts')
      .filter((f) => readFileSync(f, 'utf8').includes('readMultipartUpload('))
      .map((f) => `/api/${f.slice(join(root, 'server/api').length + 1).replace(/\.(post|put|patch)\.ts$/, '').replace(/\/index$/, '').replace(/\[[^\]]+\]/g, '*')}`)
    expect(uploads).toContain('/api/recordings')
    expect(uploads.filter((u) => !config.includes(`'${u}': { security: { requestSizeLimiter: false } }`))).toEqual([])
  })

  it('builds no SQL from interpolated text: every raw query passes values as bindings', () => {
    const ts = [...files('server', '.ts'), ...files('workers', '.ts')]
    const raw = /\b(?:raw|whereRaw|orderByRaw|havingRaw|joinRaw|selectRaw)\(\s*`(?:[^`\\]|\\.)*\$\{/
    expect(ts.filter((f) => raw.test(readFileSync(f, 'utf8'))).map((f) => f.slice(root.length + 1))).toEqual([])
  })
})
