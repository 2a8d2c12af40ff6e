/** The invitation e-mail: a one-time link to set a name and a password. */
import { ROLE_LABELS, type Role } from '../../shared/utils/roles'
import { sendMail } from './index'

export interface InvitationMail {
  email: string
  role: Role
  link: string
  expiresAt: string
  invitedBy: { displayName: string; email: string }
}

/**
 * Sends the link to the invited address.
 * @throws MailError (`mail_not_configured`, `mail_failed`).
 */
export async function sendInvitationMail(m: InvitationMail): Promise<void> {
  const until = new Date(m.expiresAt).toUTCString()
  await sendMail({
    to: m.email,
    subject: 'Your Conetrail account',
    text: [
      `${m.invitedBy.displayName} <${m.invitedBy.email}> invited you to Conetrail as ${ROLE_LABELS[m.role]}.`,
      '',
      'Open this link to choose your name and password (it works once):',
      m.link,
      '',
      `The link expires on ${until}. If you did not expect this message, ignore it.`,
    ].join('\n'),
  })
}
