// access: public (signing out without a session is harmless)
import { noteSignOut } from '../../services/sign-in'

export default defineEventHandler(async (event) => {
  const session = await getUserSession(event)
  await endSession(event)
  if (session.user) {
    const { id, email } = session.user
    await noteSignOut(useDb(), { id, email }, clientAddress(event))
  }
  return { ok: true }
})
