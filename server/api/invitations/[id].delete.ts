import { withdrawInvitation } from '../../services/people'
import { personIdParamSchema } from '../../../shared/utils/people'
import type { InvitationView } from '../../../shared/types/people'

/** Withdraws a pending invitation: its link stops working at once. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'admin')
  const { id } = await getValidatedRouterParams(event, zodValidator(personIdParamSchema))
  const view = await withdrawInvitation(useDb(), actor, id)
  if (!view) throw new DomainError('invitation_not_pending', `Invitation ${id} is not pending (used, expired, withdrawn or unknown)`)
  return view satisfies InvitationView
})
