import { invitePerson } from '../../services/people'
import { inviteSchema } from '../../../shared/utils/people'
import type { InvitationCreated } from '../../../shared/types/people'

/** Invites someone by e-mail: 201 with the one-time link (shown this once; only its hash is kept). */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'admin')
  const input = await readValidatedBody(event, zodValidator(inviteSchema))
  const created = await invitePerson(useDb(), actor, input, publicOrigin(event))
  setResponseStatus(event, 201)
  return created satisfies InvitationCreated
})
