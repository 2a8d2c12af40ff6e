import { listUsers } from '../../repos/users'
import type { PersonSummary } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  await requireRole(event, 'admin')
  return (await listUsers(useDb())) satisfies PersonSummary[]
})
