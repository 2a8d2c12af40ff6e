import { listPeople } from '../../repos/people'
import type { PersonView } from '../../../shared/types/people'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'admin')
  return (await listPeople(useDb())) satisfies PersonView[]
})
