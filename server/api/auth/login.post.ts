import { getUserByEmail, recordLogin } from '../../repos/users'
import { loginSchema } from '../../../shared/utils/schemas'
import type { MeResponse } from '../../../shared/types/api'

// Verified when the e-mail is unknown, so that a wrong e-mail and a wrong password take the same time.
let decoyHash: Promise<string> | undefined

export default defineEventHandler(async (event) => {
  const { email, password } = await readValidatedBody(event, zodValidator(loginSchema))
  const db = useDb()
  const row = await getUserByEmail(db, email)
  decoyHash ??= hashPassword('decoy password, never matches')
  const ok = await verifyPassword(row?.password_hash ?? (await decoyHash), password)
  if (!row || !ok || !row.active) {
    // One generic answer for every cause: it must not tell which e-mails exist.
    throw httpError(401, 'invalid_credentials', 'Wrong e-mail or password')
  }
  const user = { id: Number(row.id), email: row.email, displayName: row.display_name, role: row.role }
  await setUserSession(event, { user, loggedInAt: new Date().toISOString() })
  await recordLogin(db, user.id)
  return { user } satisfies MeResponse
})
