import type { H3Event } from 'h3'
import type { User } from '#auth-utils'
import { getUserById } from '../repos/people'
import type { Actor } from '../services/people'
import { roleAllows, type Role } from '../../shared/utils/roles'
import { useDb } from './db'
import { DomainError } from '../../shared/utils/domain-error'

/** Whether a session signed in at `loggedInAt` is older than the person's cut-off (set on deactivation). */
export function sessionCutOff(loggedInAt: unknown, validFrom: Date | null): boolean {
  if (!validFrom) return false
  const at = typeof loggedInAt === 'string' ? Date.parse(loggedInAt) : Number.NaN
  return !Number.isFinite(at) || at < validFrom.getTime()
}

/**
 * The guard every protected route calls first. Admin passes every role check.
 * The account is read again on each call, so a deactivated person or a changed role takes
 * effect at once, not when the cookie expires; a session signed in before the person was last
 * deactivated stays refused after a reactivation.
 * @throws 401 `unauthenticated` without a valid session; 403 `forbidden` for another role.
 */
export async function requireRole(event: H3Event, ...roles: Role[]): Promise<User> {
  const session = await getUserSession(event)
  if (!session.user) throw new DomainError('unauthenticated', 'Sign in first')
  const row = await getUserById(useDb(), session.user.id)
  if (!row || !row.active || sessionCutOff(session.loggedInAt, row.sessions_valid_from)) {
    await endSession(event)
    throw new DomainError('unauthenticated', 'Sign in first')
  }
  const user: User = { id: Number(row.id), email: row.email, displayName: row.display_name, role: row.role }
  if (roles.length && !roleAllows(user.role, roles)) {
    throw new DomainError('forbidden', `This needs the ${roles.join(' or ')} role`)
  }
  return user
}

/** requireRole, with the caller's address for the audit log. */
export async function requireActor(event: H3Event, ...roles: Role[]): Promise<Actor> {
  const user = await requireRole(event, ...roles)
  return { id: user.id, displayName: user.displayName, email: user.email, ip: clientAddress(event) }
}

/**
 * CONETRAIL_TRUST_PROXY=1: Conetrail runs behind a reverse proxy that sets X-Forwarded-For,
 * X-Forwarded-Proto and X-Forwarded-Host. Off by default: anyone can send those headers.
 */
export function trustProxy(): boolean {
  return ['1', 'true', 'yes'].includes((process.env.CONETRAIL_TRUST_PROXY ?? '').toLowerCase())
}

/** The caller's address: the socket's, or the proxy's X-Forwarded-For when it is trusted. */
export function clientAddress(event: H3Event): string | null {
  return getRequestIP(event, { xForwardedFor: trustProxy() }) ?? null
}

/** The origin people reach this server at (for links in e-mails). */
export function publicOrigin(event: H3Event): string {
  const fixed = process.env.CONETRAIL_PUBLIC_URL?.trim()
  if (fixed) return fixed.replace(/\/+$/, '')
  const trusted = trustProxy()
  return getRequestURL(event, { xForwardedHost: trusted, xForwardedProto: trusted }).origin
}

/**
 * Whether the session cookie gets the Secure flag: CONETRAIL_SECURE_COOKIE=1 always, =0 never,
 * `auto` (default) when the request came over https (TLS here, or a trusted proxy's https).
 * Plain http on a factory network then still signs in; over https the cookie never leaks to http.
 */
export function secureCookie(event: H3Event): boolean {
  const mode = (process.env.CONETRAIL_SECURE_COOKIE ?? 'auto').toLowerCase()
  if (['1', 'true', 'yes'].includes(mode)) return true
  if (['0', 'false', 'no'].includes(mode)) return false
  return getRequestProtocol(event, { xForwardedProto: trustProxy() }) === 'https'
}

function cookieConfig(event: H3Event) {
  return { cookie: { secure: secureCookie(event), httpOnly: true, sameSite: 'lax' as const } }
}

/**
 * Starts a fresh session for a person who just proved who they are: a new id and a new start
 * time (the lifetime, runtimeConfig.session.maxAge, counts from here, not from the first visit).
 */
export async function startSession(event: H3Event, user: User): Promise<void> {
  const name = (useRuntimeConfig(event).session as { name?: string } | undefined)?.name ?? 'nuxt-session'
  // h3 keeps the request's session in event.context.sessions; replacing it drops the visitor's old one.
  const sessions = (event.context.sessions ??= Object.create(null)) as Record<string, unknown>
  sessions[name] = { id: crypto.randomUUID(), createdAt: Date.now(), data: Object.create(null) }
  await setUserSession(event, { user, loggedInAt: new Date().toISOString() }, cookieConfig(event))
}

export async function endSession(event: H3Event): Promise<void> {
  await clearUserSession(event, cookieConfig(event))
}
