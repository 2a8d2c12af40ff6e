// access: public
import { signIn } from '../../services/sign-in'
import { loginSchema } from '../../../shared/utils/sign-in'
import type { MeResponse } from '../../../shared/types/api'

export default defineEventHandler(async (event) => {
  const body = await readValidatedBody(event, zodValidator(loginSchema))
  const user = await signIn(useDb(), body, clientAddress(event))
  await startSession(event, user)
  return { user } satisfies MeResponse
})
