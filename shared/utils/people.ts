import { z } from 'zod'
import { decimalNumber, plainText } from './input'
import { ROLES } from './roles'

/** How long an invitation link works. */
export const INVITATION_HOURS = 72
/** Shortest password a person may choose (common practice: length beats composition rules). */
export const MIN_PASSWORD_LENGTH = 12

const email = z.string({ error: 'Enter an e-mail' }).trim().toLowerCase().min(3, 'Enter an e-mail').max(254).pipe(z.email('Enter a valid e-mail address'))
const role = z.enum(ROLES, { error: `Choose one of: ${ROLES.join(', ')}` })

export const inviteSchema = z.object({ email, role })
export type InviteInput = z.infer<typeof inviteSchema>

/** The token of an invitation link: 32 random bytes in base64url. */
export const invitationTokenParamSchema = z.object({
  token: z.string().regex(/^[A-Za-z0-9_-]{43}$/, 'Not an invitation link'),
})

export const acceptInvitationSchema = z.object({
  displayName: plainText({ error: 'Enter your name' }).trim().min(2, 'Enter your name').max(80, 'At most 80 characters'),
  password: plainText({ error: 'Choose a password' })
    .min(MIN_PASSWORD_LENGTH, `At least ${MIN_PASSWORD_LENGTH} characters`)
    .max(200, 'At most 200 characters'),
})
export type AcceptInvitationInput = z.infer<typeof acceptInvitationSchema>

export const personIdParamSchema = z.object({ id: decimalNumber(z.number().int().positive().max(Number.MAX_SAFE_INTEGER)) })

/** One change at a time to a person: a new role, or (de)activation. */
export const personPatchSchema = z
  .object({ role: role.optional(), active: z.boolean().optional() })
  .strict()
  .refine((p) => p.role !== undefined || p.active !== undefined, { message: 'Give a role or active' })
export type PersonPatch = z.infer<typeof personPatchSchema>
