/** Sign-in sessions as the server knows them (table `user_sessions`): the cookie only names one. */
import type { Knex } from 'knex'
import type { UserRow } from './people'

/** Why a session ended before its time. */
export type SessionEnd = 'sign_out' | 'signed_in_again' | 'deactivated'

/** Session ids are UUIDs (h3 and startSession make them with crypto.randomUUID). */
const SESSION_ID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i

/** Records a session that a sign-in just started, open for `maxAgeS` seconds from now; drops rows already past their end. */
export async function openSession(db: Knex, s: { id: string; userId: number; maxAgeS: number }): Promise<void> {
  await db('user_sessions').where('expires_at', '<', db.fn.now()).delete()
  await db('user_sessions').insert({ id: s.id, user_id: String(s.userId), expires_at: db.raw("now() + ? * interval '1 second'", [s.maxAgeS]) })
}

/**
 * The person of an open session: the session exists, belongs to `userId`, has not ended and has
 * not passed its end. Undefined otherwise (also for an id that is not a session id at all).
 */
export async function getSessionUser(db: Knex, sessionId: string, userId: number): Promise<UserRow | undefined> {
  if (!SESSION_ID.test(sessionId)) return undefined
  return db<UserRow>('users as u')
    .join('user_sessions as s', 's.user_id', 'u.id')
    .where({ 's.id': sessionId, 'u.id': String(userId) })
    .whereNull('s.ended_at')
    .where('s.expires_at', '>', db.fn.now())
    .first('u.*')
}

/** Ends one session; answers whether it was open until now (false: unknown or already ended). */
export async function endSessionRow(db: Knex, sessionId: string, reason: SessionEnd): Promise<boolean> {
  if (!SESSION_ID.test(sessionId)) return false
  const rows = await db('user_sessions').where({ id: sessionId }).whereNull('ended_at').update({ ended_at: db.fn.now(), ended_reason: reason }).returning('id')
  return rows.length > 0
}

/** Ends every open session of a person; answers how many there were. */
export async function endSessionsOfUser(db: Knex, userId: number, reason: SessionEnd): Promise<number> {
  const rows = await db('user_sessions').where({ user_id: String(userId) }).whereNull('ended_at').update({ ended_at: db.fn.now(), ended_reason: reason }).returning('id')
  return rows.length
}
