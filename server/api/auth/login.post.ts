// access: public
import { getUserByEmail, normaliseEmail } from '../../repos/people'
import { noteSignIn, noteSignInRefused } from '../../services/sign-in'
import { loginSchema } from '../../../shared/utils/sign-in'
import type { MeResponse } from '../../../shared/types/api'

// Verified when the e-mail is unknown, so that a wrong e-mail and a wrong password take the same time.
let decoyHash: Promise<string> | undefined

export default defineEventHandler(async (event) => {
  const body = await readValidatedBody(event, zodValidator(loginSchema))
  const email = normaliseEmail(body.email)
  const ip = clientAddress(event)
  const wait = await signInRetryAfter(email, ip)
  if (wait > 0) {
    setResponseHeader(event, 'retry-after', wait)
    throw new DomainError('sign_in_limited', `Too many failed sign-ins: try again in ${Math.ceil(wait / 60)} min`, { retryAfterS: wait })
  }
  const db = useDb()
  const row = await getUserByEmail(db, email)
  decoyHash ??= hashPassword('decoy password, never matches')
  const ok = await verifyPassword(row?.password_hash ?? (await decoyHash), body.password)
  if (!row || !ok || !row.active) {
    await recordSignInFailure(email, ip)
    // The e-mail tried and why, never the password.
    const reason = !row ? 'unknown_email' : !ok ? 'wrong_password' : 'deactivated'
    await noteSignInRefused(db, { email, userId: row?.id ?? null, reason, ip })
    // One generic answer for every cause: it must not tell which e-mails exist.
    throw new DomainError('invalid_credentials', 'Wrong e-mail or password')
  }
  await recordSignInSuccess(email)
  const user = { id: Number(row.id), email: row.email, displayName: row.display_name, role: row.role }
  await startSession(event, user)
  await noteSignIn(db, user, ip)
  return { user } satisfies MeResponse
})
