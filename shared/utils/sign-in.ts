import { z } from 'zod'
import { plainText } from './input'

/** Sign-in form and POST /api/auth/login body. */
export const loginSchema = z.object({
  email: z.string({ error: 'Enter your e-mail' }).trim().min(1, 'Enter your e-mail').max(254).pipe(z.email('Enter a valid e-mail address')),
  password: plainText({ error: 'Enter your password' }).min(1, 'Enter your password').max(200),
})
export type LoginInput = z.infer<typeof loginSchema>
