// access: public (signing out without a session is harmless)
import { signOut } from '../../services/sign-in'

/** Ends the session on the server (a copied cookie is refused from now on) and clears the browser's cookie. */
export default defineEventHandler(async (event) => {
  const session = await getUserSession(event)
  await endSession(event)
  if (session.user) {
    const { id, email } = session.user
    await signOut(useDb(), session.id, { id, email }, clientAddress(event))
  }
  return { ok: true }
})
