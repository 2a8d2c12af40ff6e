// access: public (the invited person has no account yet; the link's token is the proof)
import { requireUsableInvitation } from '../../../repos/invitations'
import { invitationTokenParamSchema } from '../../../../shared/utils/people'
import type { InvitationPublic } from '../../../../shared/types/people'

/** What the accept page shows: the invited e-mail and role. 404/410 with a code for a bad link. */
export default defineEventHandler(async (event) => {
  const { token } = await getValidatedRouterParams(event, zodValidator(invitationTokenParamSchema))
  const row = await requireUsableInvitation(useDb(), token)
  return { email: row.email, role: row.role, expiresAt: row.expires_at.toISOString() } satisfies InvitationPublic
})
