// access: public (signing out without a session is harmless)
import { writeAudit } from '../../repos/audit'

export default defineEventHandler(async (event) => {
  const session = await getUserSession(event)
  await endSession(event)
  if (session.user) {
    const { id, email } = session.user
    await writeAudit(useDb(), { userId: id, action: 'auth.sign_out', entity: 'user', entityId: id, subject: email, ip: clientAddress(event) })
  }
  return { ok: true }
})
