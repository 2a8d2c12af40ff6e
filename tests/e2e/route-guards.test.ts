/**
 * Every file under server/api declares who may call it, and the real server enforces it.
 * The rule is read from the file itself (DEVELOPERS.md, "Add a route with its role rule"): the first
 * guard call, `requireRole(event, 'a', 'b')` / `requireActor(...)` / `requireUserOrStation(...)`
 * (no roles: any signed-in person; `...LIST` spreads a role list the file imports), or a
 * `// access: public` line. A file without either fails here,
 * so a new route without a rule fails the build's tests. Protected routes must answer 401 without a
 * session and 403 to every demo role the rule leaves out (the guard runs before any validation, so
 * dummy parameters and an empty body are enough).
 */
import { readdirSync, readFileSync } from 'node:fs'
import { dirname, join, relative, resolve } from 'node:path'
import { fetch } from '@nuxt/test-utils/e2e'
import { beforeAll, describe, expect, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { ROLES, isRole, roleAllows, type Role } from '../../shared/utils/roles'
import { signIn, useTestServer } from '../support/app'

const host = await useTestServer()
const apiDir = resolve(import.meta.dirname, '../../server/api')
const METHODS = ['get', 'post', 'put', 'patch', 'delete'] as const

type Rule = { kind: 'public' } | { kind: 'signed-in'; roles: Role[] }
interface Route {
  file: string
  method: string
  url: string
  rule: Rule | null
}

const GUARD = /\b(?:requireRole|requireActor|requireUserOrStation)\(\s*event\s*((?:,\s*(?:'[a-z]+'|\.\.\.[A-Za-z_$][\w$]*)\s*)*)\)/
const PUBLIC = /^\s*\/\/ access: public\b/m

/**
 * The rule a route file declares, or null when it declares none. Roles are quoted names or the
 * spread of a role list the file imports (`requireRole(event, ...CERTIFICATE_ROLES)`), which
 * `lookUp` resolves.
 */
export function ruleOf(source: string, lookUp: (name: string) => unknown = () => undefined): Rule | null {
  const guard = GUARD.exec(source)
  if (guard) {
    const roles = [...(guard[1] ?? '').matchAll(/'([a-z]+)'|\.\.\.([A-Za-z_$][\w$]*)/g)].flatMap((m) => {
      if (m[1]) return [m[1]]
      const list = lookUp(m[2]!)
      return Array.isArray(list) ? list : ['(unresolved)']
    })
    if (!roles.every(isRole)) return null
    return { kind: 'signed-in', roles: roles as Role[] }
  }
  return PUBLIC.test(source) ? { kind: 'public' } : null
}

/** The values of `wanted`, from the modules of this project the route file imports them from. */
async function importsOf(path: string, source: string, wanted: string[]): Promise<Record<string, unknown>> {
  const found: Record<string, unknown> = {}
  for (const m of source.matchAll(/import\s*\{([^}]*)\}\s*from\s*'(\.[^']+)'/g)) {
    const names = m[1]!.split(',').map((n) => n.trim()).filter((n) => wanted.includes(n))
    if (!names.length) continue
    const mod = (await import(resolve(dirname(path), m[2]!.endsWith('.ts') ? m[2]! : `${m[2]}.ts`))) as Record<string, unknown>
    for (const name of names) found[name] = mod[name]
  }
  return found
}

async function routeOf(path: string): Promise<Route> {
  const rel = relative(apiDir, path).split('\\').join('/').replace(/\.ts$/, '')
  const parts = rel.split('.')
  const suffix = parts.at(-1)!
  const method = (METHODS as readonly string[]).includes(suffix) ? (parts.pop(), suffix) : 'get'
  const segments = parts
    .join('.')
    .split('/')
    .filter((s) => s !== 'index')
    .map((s) => (s.startsWith('[...') ? 'x/y' : s.replace(/\[[^\]]+\]/g, '1')))
  const source = readFileSync(path, 'utf8')
  const spreads = [...(GUARD.exec(source)?.[1] ?? '').matchAll(/\.\.\.([A-Za-z_$][\w$]*)/g)].map((m) => m[1]!)
  const spread = spreads.length ? await importsOf(path, source, spreads) : {}
  return { file: `server/api/${rel}.ts`, method: method.toUpperCase(), url: `/api/${segments.join('/')}`.replace(/\/$/, ''), rule: ruleOf(source, (n) => spread[n]) }
}

const routes = (
  await Promise.all(
    readdirSync(apiDir, { recursive: true, withFileTypes: true })
      .filter((d) => d.isFile() && d.name.endsWith('.ts'))
      .map((d) => routeOf(join(d.parentPath, d.name))),
  )
).sort((a, b) => a.file.localeCompare(b.file))

const cookies = {} as Record<Role, string>
beforeAll(async () => {
  for (const role of ROLES) {
    const { status, cookie } = await signIn(host, demoEmail(role), DEMO_PASSWORD)
    expect(status, role).toBe(200)
    cookies[role] = cookie
  }
})

async function call(r: Route, cookie?: string) {
  const headers: Record<string, string> = { 'content-type': 'application/json' }
  if (cookie) headers.cookie = cookie
  const res = await fetch(r.url, { method: r.method, headers, body: r.method === 'GET' ? undefined : '{}' })
  await res.arrayBuffer()
  return res.status
}

describe('every API route declares who may call it', () => {
  it('finds the routes (a broken glob would prove nothing)', () => {
    expect(routes.length).toBeGreaterThan(30)
    expect(routes.map((r) => `${r.method} ${r.url}`)).toEqual(expect.arrayContaining(['POST /api/auth/login', 'GET /api/people', 'PATCH /api/people/1', 'GET /api/audit']))
  })

  it('has a rule in every file', () => {
    expect(routes.filter((r) => !r.rule).map((r) => r.file)).toEqual([])
  })

  it('reads the rule of each kind of declaration', () => {
    expect(ruleOf("await requireRole(event, 'quality', 'engineer')")).toEqual({ kind: 'signed-in', roles: ['quality', 'engineer'] })
    expect(ruleOf('const user = await requireRole(event)')).toEqual({ kind: 'signed-in', roles: [] })
    expect(ruleOf("await requireUserOrStation(event, 'technician')")).toEqual({ kind: 'signed-in', roles: ['technician'] })
    expect(ruleOf('// access: public\nexport default 1')).toEqual({ kind: 'public' })
    expect(ruleOf('await requireRole(event, ...SOME_ROLES)', (n) => (n === 'SOME_ROLES' ? ['support', 'quality'] : undefined))).toEqual({ kind: 'signed-in', roles: ['support', 'quality'] })
    expect(ruleOf('await requireRole(event, ...UNKNOWN)')).toBeNull()
    expect(ruleOf("await requireRole(event, 'superuser')")).toBeNull()
    expect(ruleOf('export default defineEventHandler(() => 1)')).toBeNull()
  })
})

describe.each(routes.filter((r) => r.rule?.kind === 'signed-in'))('$method $url ($file)', (r) => {
  const roles = (r.rule as { roles: Role[] }).roles
  it('answers 401 without a session', async () => {
    expect(await call(r)).toBe(401)
  })
  const refused = roles.length ? ROLES.filter((role) => !roleAllows(role, roles)) : []
  if (refused.length) {
    it.each(refused)('answers 403 to a %s', async (role) => {
      expect(await call(r, cookies[role])).toBe(403)
    })
  }
})

describe.each(routes.filter((r) => r.rule?.kind === 'public'))('public $method $url', (r) => {
  it('answers without a session (never 401 or 403)', async () => {
    expect([401, 403]).not.toContain(await call(r))
  })
})
