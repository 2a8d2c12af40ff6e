import { listInvitations } from '../../repos/invitations'
import type { InvitationView } from '../../../shared/types/people'

/** The latest invitations and their state (never their links). */
export default defineEventHandler(async (event) => {
  await requireRole(event, 'admin')
  return (await listInvitations(useDb())) satisfies InvitationView[]
})
