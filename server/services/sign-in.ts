/** Sign-in and sign-out: the password check under the sign-in limits, the end of a session, and what the audit log records (the session cookie stays with the route). */
import type { Knex } from 'knex'
import type { User } from '#auth-utils'
import { getUserByEmail, normaliseEmail, recordLogin } from '../repos/people'
import { endSessionRow } from '../repos/sessions'
import { recordSignInSuccess, reserveSignInTry } from '../utils/rate-limit'
import { DomainError } from '../../shared/utils/domain-error'
import { recordAudit } from './audit'

// Verified when the e-mail is unknown, so that a wrong e-mail and a wrong password take the same time.
let decoyHash: Promise<string> | undefined

/**
 * Checks an e-mail and password under the sign-in limits and audits the outcome. One answer for
 * every refusal, so that it never tells which e-mails exist.
 * @throws DomainError `sign_in_limited` (with `retryAfterS`) after too many failures, `invalid_credentials`.
 */
export async function signIn(db: Knex, input: { email: string; password: string }, ip: string | null): Promise<User> {
  const email = normaliseEmail(input.email)
  // The try is counted before the password is checked: tries sent at once cannot outrun the limit.
  const wait = await reserveSignInTry(email, ip)
  if (wait > 0) throw new DomainError('sign_in_limited', `Too many failed sign-ins: try again in ${Math.ceil(wait / 60)} min`, { retryAfterS: wait })
  const row = await getUserByEmail(db, email)
  decoyHash ??= hashPassword('decoy password, never matches')
  const ok = await verifyPassword(row?.password_hash ?? (await decoyHash), input.password)
  if (!row || !ok || !row.active) {
    await noteSignInRefused(db, { email, userId: row?.id ?? null, reason: !row ? 'unknown_email' : !ok ? 'wrong_password' : 'deactivated', ip })
    throw new DomainError('invalid_credentials', 'Wrong e-mail or password')
  }
  await recordSignInSuccess(email, ip)
  const user = { id: Number(row.id), email: row.email, displayName: row.display_name, role: row.role }
  await noteSignIn(db, user, ip)
  return user
}

/** Why a sign-in was refused, for the audit log only (the caller's answer never tells). */
export type SignInRefusal = 'unknown_email' | 'wrong_password' | 'deactivated'

/** Audits a refused sign-in: the e-mail tried and why, never the password. */
async function noteSignInRefused(db: Knex, a: { email: string; userId: string | number | null; reason: SignInRefusal; ip: string | null }): Promise<void> {
  await recordAudit(db, { userId: null, action: 'auth.sign_in_failed', entity: 'user', entityId: a.userId ?? a.email, subject: a.email, ip: a.ip, detail: { email: a.email, reason: a.reason } })
}

/** Stamps the person's last sign-in and audits it. */
async function noteSignIn(db: Knex, user: { id: number; email: string }, ip: string | null): Promise<void> {
  await recordLogin(db, user.id)
  await recordAudit(db, { userId: user.id, action: 'auth.sign_in', entity: 'user', entityId: user.id, subject: user.email, ip })
}

/**
 * Signs a session out on the server: its row ends, so any copy of its cookie is refused from now
 * on. Audited once, when the session was still open (a replayed copy changes nothing).
 */
export async function signOut(db: Knex, sessionId: string, user: { id: number; email: string }, ip: string | null): Promise<void> {
  if (!(await endSessionRow(db, sessionId, 'sign_out'))) return
  await recordAudit(db, { userId: user.id, action: 'auth.sign_out', entity: 'user', entityId: user.id, subject: user.email, ip })
}
