import type { H3Event } from 'h3'
import type { User } from '#auth-utils'
import { getUserById } from '../repos/users'
import { roleAllows, type Role } from '../../shared/utils/roles'
import { useDb } from './db'
import { httpError } from './errors'

/**
 * The guard every protected route calls first. Admin passes every role check.
 * The account is read again on each call, so a deactivated person or a changed role takes
 * effect at once, not when the cookie expires.
 * @throws 401 `unauthenticated` without a valid session; 403 `forbidden` for another role.
 */
export async function requireRole(event: H3Event, ...roles: Role[]): Promise<User> {
  const session = await getUserSession(event)
  if (!session.user) throw httpError(401, 'unauthenticated', 'Sign in first')
  const row = await getUserById(useDb(), session.user.id)
  if (!row || !row.active) {
    await clearUserSession(event)
    throw httpError(401, 'unauthenticated', 'Sign in first')
  }
  const user: User = { id: Number(row.id), email: row.email, displayName: row.display_name, role: row.role }
  if (roles.length && !roleAllows(user.role, roles)) {
    throw httpError(403, 'forbidden', `This needs the ${roles.join(' or ')} role`)
  }
  return user
}
