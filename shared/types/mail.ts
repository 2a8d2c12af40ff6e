/** Response types of the dev mailbox (the local mail sink of `npm start` and the tests). */

export interface MailboxEntry {
  /** File name stem of the stored .eml: `<received ms>-<sequence>`. */
  id: string
  receivedAt: string
  /** SMTP envelope (what the sender asked the server to deliver). */
  envelopeFrom: string
  envelopeTo: string[]
  /** Headers of the message itself. */
  from: string
  to: string[]
  subject: string
  date: string | null
  attachments: string[]
  size: number
}

export interface MailboxList {
  dir: string
  messages: MailboxEntry[]
}

export interface MailboxMessage extends MailboxEntry {
  text: string | null
  html: string | null
  raw: string
}
