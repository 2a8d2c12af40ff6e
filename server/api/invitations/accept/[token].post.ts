// access: public (the invited person has no account yet; the link's token is the proof)
import { joinByInvitation } from '../../../services/people'
import { acceptInvitationSchema, invitationTokenParamSchema } from '../../../../shared/utils/people'

/**
 * Uses an invitation once: creates the account (name and password chosen here, the e-mail and role
 * from the invitation). 201; 404 `invitation_unknown`, 410 `invitation_used` / `invitation_expired`
 * / `invitation_revoked`, 409 `email_taken`. The person then signs in as usual.
 */
export default defineEventHandler(async (event) => {
  const { token } = await getValidatedRouterParams(event, zodValidator(invitationTokenParamSchema))
  const input = await readValidatedBody(event, zodValidator(acceptInvitationSchema))
  // Hashed by the sign-in module with the server's settings, before the service sees it.
  const passwordHash = await hashPassword(input.password)
  const joined = await joinByInvitation(useDb(), token, { displayName: input.displayName, passwordHash }, clientAddress(event))
  setResponseStatus(event, 201)
  return { email: joined.email, role: joined.role }
})
