import { DomainError } from '../../shared/utils/domain-error'
import type { ErrorCode } from '../../shared/utils/error-codes'
import { createHash, randomBytes } from 'node:crypto'
import type { Knex } from 'knex'
import type { Role } from '../../shared/utils/roles'
import type { InvitationStatus, InvitationView } from '../../shared/types/people'
import { createUser, normaliseEmail } from './people'
import { isUniqueViolation } from './pg-errors'

export const INVITATION_ERROR_CODES = ['invitation_unknown', 'invitation_used', 'invitation_expired', 'invitation_revoked', 'email_taken'] as const satisfies readonly ErrorCode[]
/** Why an invitation cannot be used. */
export class InvitationError extends DomainError<(typeof INVITATION_ERROR_CODES)[number]> {}

/** 256 random bits: a fast hash is enough, and only the hash is stored. */
export function hashInvitationToken(token: string): string {
  return createHash('sha256').update(token).digest('hex')
}

interface InvitationRow {
  id: string
  email: string
  role: Role
  invited_by: string
  created_at: Date
  expires_at: Date
  used_at: Date | null
  user_id: string | null
  revoked_at: Date | null
}

function statusOf(r: InvitationRow, now = Date.now()): InvitationStatus {
  if (r.used_at) return 'used'
  if (r.revoked_at) return 'revoked'
  return r.expires_at.getTime() <= now ? 'expired' : 'pending'
}

function toView(r: InvitationRow & { invited_by_name: string }): InvitationView {
  return {
    id: Number(r.id),
    email: r.email,
    role: r.role,
    invitedBy: r.invited_by_name,
    createdAt: r.created_at.toISOString(),
    expiresAt: r.expires_at.toISOString(),
    status: statusOf(r),
    usedAt: r.used_at ? r.used_at.toISOString() : null,
  }
}

const withInviter = (db: Knex) => db('invitations as i').join('users as u', 'u.id', 'i.invited_by').select('i.*', 'u.display_name as invited_by_name')

/** The latest invitations (pending first), newest first. */
export async function listInvitations(db: Knex, limit = 50): Promise<InvitationView[]> {
  const rows = await withInviter(db).orderBy('i.created_at', 'desc').orderBy('i.id', 'desc').limit(limit)
  return rows.map(toView)
}

export interface NewInvitation {
  email: string
  role: Role
  invitedBy: number
  hours: number
}

/**
 * Creates an invitation and returns it with its token (shown once). An earlier pending invitation
 * for the same e-mail is withdrawn, so only the newest link works.
 * @throws InvitationError `email_taken` when someone already signs in with that e-mail.
 */
export async function createInvitation(db: Knex, n: NewInvitation): Promise<{ view: InvitationView; token: string; revoked: number[] }> {
  const email = normaliseEmail(n.email)
  const token = randomBytes(32).toString('base64url')
  return db.transaction(async (trx) => {
    if (await trx('users').where({ email }).first('id')) throw new InvitationError('email_taken', `${email} already has an account`)
    const revoked = await trx('invitations')
      .where({ email })
      .whereNull('used_at')
      .whereNull('revoked_at')
      .update({ revoked_at: trx.fn.now(), revoked_by: n.invitedBy })
      .returning('id')
    const [row] = await trx('invitations')
      .insert({ token_hash: hashInvitationToken(token), email, role: n.role, invited_by: n.invitedBy, expires_at: trx.raw(`now() + make_interval(hours => ?)`, [n.hours]) })
      .returning('id')
    const view = toView(await withInviter(trx).where('i.id', row.id).first())
    return { view, token, revoked: revoked.map((r: { id: string }) => Number(r.id)) }
  })
}

/**
 * The invitation a link's token names, whatever its state; undefined for an unknown token.
 */
export async function getInvitationByToken(db: Knex, token: string): Promise<(InvitationView & { status: InvitationStatus }) | undefined> {
  const row = await withInviter(db).where('i.token_hash', hashInvitationToken(token)).first()
  return row && toView(row)
}

/** Throws the coded reason an invitation cannot be used now. */
function assertUsable(r: InvitationRow | undefined): asserts r is InvitationRow {
  if (!r) throw new InvitationError('invitation_unknown', 'This invitation link is not valid: ask an admin for a new one')
  const status = statusOf(r)
  if (status === 'used') throw new InvitationError('invitation_used', 'This invitation link has already been used: sign in, or ask an admin for a new one')
  if (status === 'revoked') throw new InvitationError('invitation_revoked', 'This invitation was withdrawn: ask an admin for a new one')
  if (status === 'expired') throw new InvitationError('invitation_expired', 'This invitation link has expired: ask an admin for a new one')
}

/** Checks a token without using it (for the accept page). @throws InvitationError */
export async function requireUsableInvitation(db: Knex, token: string): Promise<InvitationRow> {
  const row = await db('invitations').where({ token_hash: hashInvitationToken(token) }).first<InvitationRow | undefined>()
  assertUsable(row)
  return row
}

/**
 * Uses an invitation once: creates the account with the invited e-mail and role and closes the
 * invitation, in one transaction (a second use of the same link waits on the row lock, then fails).
 * @throws InvitationError for an unknown, used, withdrawn or expired link, or a taken e-mail.
 */
export async function acceptInvitation(db: Knex, token: string, a: { displayName: string; passwordHash: string }): Promise<{ userId: number; invitationId: number; email: string; role: Role }> {
  return db.transaction(async (trx) => {
    const row = await trx('invitations').where({ token_hash: hashInvitationToken(token) }).forUpdate().first<InvitationRow | undefined>()
    assertUsable(row)
    let userId: number
    try {
      userId = await createUser(trx, { email: row.email, displayName: a.displayName, passwordHash: a.passwordHash, role: row.role })
    } catch (err) {
      if (isUniqueViolation(err)) throw new InvitationError('email_taken', `${row.email} already has an account: sign in instead`)
      throw err
    }
    await trx('invitations').where({ id: row.id }).update({ used_at: trx.fn.now(), user_id: userId })
    return { userId, invitationId: Number(row.id), email: row.email, role: row.role }
  })
}

/** Withdraws a pending invitation; false when it is not pending (used, expired or withdrawn). */
export async function revokeInvitation(db: Knex, id: number, by: number): Promise<InvitationView | undefined> {
  const n = await db('invitations').where({ id }).whereNull('used_at').whereNull('revoked_at').where('expires_at', '>', db.fn.now()).update({ revoked_at: db.fn.now(), revoked_by: by })
  if (!n) return undefined
  return toView(await withInviter(db).where('i.id', id).first())
}
