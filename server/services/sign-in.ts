/** Sign-in and sign-out as the audit log records them (the session and rate limits stay with the route and its guards). */
import type { Knex } from 'knex'
import { recordLogin } from '../repos/people'
import { recordAudit } from './audit'

/** Why a sign-in was refused, for the audit log only (the caller's answer never tells). */
export type SignInRefusal = 'unknown_email' | 'wrong_password' | 'deactivated'

/** Audits a refused sign-in: the e-mail tried and why, never the password. */
export async function noteSignInRefused(db: Knex, a: { email: string; userId: string | number | null; reason: SignInRefusal; ip: string | null }): Promise<void> {
  await recordAudit(db, { userId: null, action: 'auth.sign_in_failed', entity: 'user', entityId: a.userId ?? a.email, subject: a.email, ip: a.ip, detail: { email: a.email, reason: a.reason } })
}

/** Stamps the person's last sign-in and audits it. */
export async function noteSignIn(db: Knex, user: { id: number; email: string }, ip: string | null): Promise<void> {
  await recordLogin(db, user.id)
  await recordAudit(db, { userId: user.id, action: 'auth.sign_in', entity: 'user', entityId: user.id, subject: user.email, ip })
}

/** Audits a sign-out. */
export async function noteSignOut(db: Knex, user: { id: number; email: string }, ip: string | null): Promise<void> {
  await recordAudit(db, { userId: user.id, action: 'auth.sign_out', entity: 'user', entityId: user.id, subject: user.email, ip })
}
