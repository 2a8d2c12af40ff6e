import type { H3Event } from 'h3'
import type { User } from '#auth-utils'
import { endSessionRow, getSessionUser, openSession } from '../repos/sessions'
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
 * The session must be open on the server (user_sessions: started by a sign-in, not signed out,
 * not past its end), so a copy of a signed-out cookie is refused. The account is read again on
 * each call, so a deactivated person or a changed role takes effect at once, not when the cookie
 * expires; a session signed in before the person was last deactivated stays refused after a
 * reactivation.
 * @throws 401 `unauthenticated` without a valid session; 403 `forbidden` for another role.
 */
export async function requireRole(event: H3Event, ...roles: Role[]): Promise<User> {
  const user = await signedInUser(event)
  if (!user) throw new DomainError('unauthenticated', 'Sign in first')
  if (roles.length && !roleAllows(user.role, roles)) {
    throw new DomainError('forbidden', `This needs the ${roles.join(' or ')} role`)
  }
  return user
}

/**
 * The person signed in on this request, read again from the database; null without a session or
 * when the session is no longer open (signed out, past its end, account deactivated or cut off),
 * in which case the browser's cookie is cleared too.
 */
export async function signedInUser(event: H3Event): Promise<User | null> {
  const session = await getUserSession(event)
  if (!session.user) return null
  const row = await getSessionUser(useDb(), session.id, session.user.id)
  if (!row || !row.active || sessionCutOff(session.loggedInAt, row.sessions_valid_from)) {
    await endSession(event)
    return null
  }
  return { id: Number(row.id), email: row.email, displayName: row.display_name, role: row.role }
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
 * The origins this application is reached at, for the cross-site request guard: the one the
 * request names (its Host, or the trusted proxy's X-Forwarded-Host and -Proto) and
 * CONETRAIL_PUBLIC_URL when set. A browser always sends the Host of the address it asked, which a
 * page on another origin cannot change.
 */
export function ownOrigins(event: H3Event): string[] {
  const trusted = trustProxy()
  const origins = new Set([getRequestURL(event, { xForwardedHost: trusted, xForwardedProto: trusted }).origin])
  try {
    origins.add(new URL(publicOrigin(event)).origin)
  } catch {
    // A CONETRAIL_PUBLIC_URL that is no URL names no origin.
  }
  return [...origins]
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

/** One shift, when runtimeConfig.session.maxAge (NUXT_SESSION_MAX_AGE) says nothing. */
const SESSION_MAX_AGE_S = 12 * 60 * 60

/**
 * Starts a fresh session for a person who just proved who they are: a new id and a new start
 * time (the lifetime, runtimeConfig.session.maxAge, counts from here, not from the first visit),
 * recorded on the server (user_sessions). A session the browser still held ends: a copy of the
 * old cookie does not outlive the new sign-in.
 */
export async function startSession(event: H3Event, user: User): Promise<void> {
  const config = (useRuntimeConfig(event).session ?? {}) as { name?: string; maxAge?: number }
  const previous = await getUserSession(event)
  if (previous.user) await endSessionRow(useDb(), previous.id, 'signed_in_again')
  // h3 keeps the request's session in event.context.sessions; replacing it drops the visitor's old one.
  const sessions = (event.context.sessions ??= Object.create(null)) as Record<string, unknown>
  const id = crypto.randomUUID()
  sessions[config.name ?? 'nuxt-session'] = { id, createdAt: Date.now(), data: Object.create(null) }
  await openSession(useDb(), { id, userId: user.id, maxAgeS: config.maxAge ?? SESSION_MAX_AGE_S })
  await setUserSession(event, { user, loggedInAt: new Date().toISOString() }, cookieConfig(event))
}

/** Clears the browser's session cookie (the server's record is ended by the caller: sign-out, requireRole). */
export async function endSession(event: H3Event): Promise<void> {
  await clearUserSession(event, cookieConfig(event))
}
