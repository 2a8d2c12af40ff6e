/** People: invitations, roles and (de)activation, each written to the audit log with the change. */
import { DomainError } from '../../shared/utils/domain-error'
import type { ErrorCode } from '../../shared/utils/error-codes'
import type { Knex } from 'knex'
import { acceptInvitation, createInvitation, revokeInvitation } from '../repos/invitations'
import { getUserById, listPeople, lockActiveAdmins, setActive, setRole } from '../repos/people'
import { endSessionsOfUser } from '../repos/sessions'
import { recordAudit } from './audit'
import { sendInvitationMail } from '../mail/invitation'
import { INVITATION_HOURS, type InviteInput, type PersonPatch } from '../../shared/utils/people'
import type { InvitationCreated, InvitationView, PersonView } from '../../shared/types/people'

/** Who acts, from where (for the audit log). */
export interface Actor {
  id: number
  displayName: string
  email: string
  ip: string | null
}

/** A change to a person that cannot be made. */
export const PEOPLE_ERROR_CODES = ['unknown_person', 'last_admin'] as const satisfies readonly ErrorCode[]
export class PeopleError extends DomainError<(typeof PEOPLE_ERROR_CODES)[number]> {}

/**
 * Invites someone: the link is `<origin>/invite/<token>`, e-mailed and returned once to the admin.
 * A mail failure does not undo the invitation: the admin can hand the link over another way.
 * @throws InvitationError `email_taken`.
 */
export async function invitePerson(db: Knex, by: Actor, input: InviteInput, origin: string): Promise<InvitationCreated> {
  const { view, token, revoked } = await createInvitation(db, { email: input.email, role: input.role, invitedBy: by.id, hours: INVITATION_HOURS })
  const link = `${origin}/invite/${token}`
  let mailError: string | null = null
  try {
    await sendInvitationMail({ email: view.email, role: view.role, link, expiresAt: view.expiresAt, invitedBy: by })
  } catch (err) {
    mailError = err instanceof Error ? err.message : String(err)
  }
  await recordAudit(db, {
    userId: by.id,
    action: 'invitation.create',
    entity: 'invitation',
    entityId: view.id,
    subject: view.email,
    ip: by.ip,
    detail: { email: view.email, role: view.role, expiresAt: view.expiresAt, mailed: mailError === null, replaced: revoked },
  })
  return { ...view, link, mailed: mailError === null, mailError }
}

export async function withdrawInvitation(db: Knex, by: Actor, id: number): Promise<InvitationView | undefined> {
  const view = await revokeInvitation(db, id, by.id)
  if (view) await recordAudit(db, { userId: by.id, action: 'invitation.revoke', entity: 'invitation', entityId: id, subject: view.email, ip: by.ip, detail: { email: view.email, role: view.role } })
  return view
}

/** Uses an invitation link: the new account and the audit entry. @throws InvitationError */
export async function joinByInvitation(db: Knex, token: string, input: { displayName: string; passwordHash: string }, ip: string | null) {
  const joined = await acceptInvitation(db, token, input)
  await recordAudit(db, {
    userId: joined.userId,
    action: 'invitation.accept',
    entity: 'user',
    entityId: joined.userId,
    subject: joined.email,
    ip,
    detail: { invitation: joined.invitationId, role: joined.role },
  })
  return joined
}

/**
 * Changes a person's role or (de)activates them. Nobody is ever deleted. The change that would
 * leave no active admin is refused, whoever makes it (the active admins' rows are locked first).
 * Answers the person as they now are.
 * @throws PeopleError `unknown_person`, `last_admin`.
 */
export async function changePerson(db: Knex, by: Actor, id: number, patch: PersonPatch): Promise<PersonView> {
  await db.transaction(async (trx) => {
    const admins = await lockActiveAdmins(trx)
    const person = await getUserById(trx, id)
    if (!person) throw new PeopleError('unknown_person', `No person ${id}`)
    const leavesAdmins = person.role === 'admin' && person.active && ((patch.role !== undefined && patch.role !== 'admin') || patch.active === false)
    if (leavesAdmins && admins.length <= 1) {
      throw new PeopleError('last_admin', `${person.display_name} is the last active admin: make someone else admin first`)
    }
    const audit = { userId: by.id, entity: 'user', entityId: id, subject: person.email, ip: by.ip }
    if (patch.role !== undefined && patch.role !== person.role) {
      await setRole(trx, id, patch.role)
      await recordAudit(trx, { ...audit, action: 'user.role_change', detail: { from: person.role, to: patch.role } })
    }
    if (patch.active !== undefined && patch.active !== person.active) {
      await setActive(trx, id, patch.active, by.id)
      // The person's open sessions end with the account (users.sessions_valid_from keeps refusing them too).
      if (!patch.active) await endSessionsOfUser(trx, id, 'deactivated')
      await recordAudit(trx, { ...audit, action: patch.active ? 'user.reactivate' : 'user.deactivate', detail: { role: patch.role ?? person.role } })
    }
  })
  return (await listPeople(db)).find((p) => p.id === id)!
}
