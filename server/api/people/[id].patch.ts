import { changePerson } from '../../services/people'
import { personIdParamSchema, personPatchSchema } from '../../../shared/utils/people'
import type { PersonView } from '../../../shared/types/people'

/** A new role, or (de)activation; answers the person as they now are. 409 `last_admin` when nobody would be left in charge. */
export default defineEventHandler(async (event) => {
  const actor = await requireActor(event, 'admin')
  const { id } = await getValidatedRouterParams(event, zodValidator(personIdParamSchema))
  const patch = await readValidatedBody(event, zodValidator(personPatchSchema))
  return (await changePerson(useDb(), actor, id, patch)) satisfies PersonView
})
