/**
 * Outgoing mail through nodemailer over SMTP. Settings come from the environment (README,
 * "Configuration"): SMTP_URL, or SMTP_HOST / SMTP_PORT / SMTP_USER / SMTP_PASSWORD / SMTP_SECURE;
 * MAIL_FROM for the sender. Without them, mail goes to the local sink when one is running for this
 * data directory (`npm start` and the tests run it); otherwise sending fails with MailError `mail_not_configured`.
 */
import { DomainError } from '../../shared/utils/domain-error'
import type { ErrorCode } from '../../shared/utils/error-codes'
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import nodemailer, { type Transporter } from 'nodemailer'
import type SMTPTransport from 'nodemailer/lib/smtp-transport'
import { loadConfig } from '../utils/config'
import { SINK_FILE } from './files'

export const DEFAULT_MAIL_FROM = 'Conetrail <conetrail@localhost>'

export const MAIL_ERROR_CODES = ['mail_not_configured', 'mail_failed'] as const satisfies readonly ErrorCode[]
/** Mail cannot go out: no server configured, or the server refused the message. */
export class MailError extends DomainError<(typeof MAIL_ERROR_CODES)[number]> {}

export interface OutgoingMail {
  to: string | string[]
  subject: string
  text: string
  html?: string
  attachments?: { filename: string; content: Buffer | string; contentType?: string }[]
}

/** Where the local sink keeps messages for a data directory. */
export function defaultMailboxDir(dataDir: string): string {
  return join(dataDir, 'mailbox')
}

function alive(pid: number): boolean {
  try {
    process.kill(pid, 0)
    return true
  } catch (err) {
    // EPERM: it exists but belongs to someone else.
    return (err as NodeJS.ErrnoException).code === 'EPERM'
  }
}

/** The running sink of a mailbox directory, from the file it writes while it listens. */
export function runningSink(dir: string): { port: number; url: string } | null {
  try {
    const { port, pid } = JSON.parse(readFileSync(join(dir, SINK_FILE), 'utf8')) as { port: number; pid: number }
    if (!Number.isInteger(port) || !alive(pid)) return null
    return { port, url: `smtp://127.0.0.1:${port}` }
  } catch {
    return null
  }
}

/** True when SMTP_URL or SMTP_HOST names a server. */
export function smtpConfigured(env: NodeJS.ProcessEnv = process.env): boolean {
  return Boolean(env.SMTP_URL?.trim() || env.SMTP_HOST?.trim())
}

/**
 * The dev mailbox directory when mail goes to a local sink: CONETRAIL_MAILBOX_DIR (set by npm start
 * and the test stack), else the data directory's mailbox while a sink listens there and no SMTP
 * server is configured. Null in production.
 */
export function activeMailboxDir(env: NodeJS.ProcessEnv = process.env): string | null {
  if (env.CONETRAIL_MAILBOX_DIR) return env.CONETRAIL_MAILBOX_DIR
  if (smtpConfigured(env)) return null
  const dir = defaultMailboxDir(loadConfig(env).dataDir)
  return runningSink(dir) ? dir : null
}

/** nodemailer transport options from the environment; null when mail has nowhere to go. */
export function transportOptions(env: NodeJS.ProcessEnv = process.env): string | SMTPTransport.Options | null {
  const url = env.SMTP_URL?.trim()
  if (url) return url
  const host = env.SMTP_HOST?.trim()
  if (host) {
    const secure = ['1', 'true', 'yes'].includes((env.SMTP_SECURE ?? '').toLowerCase())
    const port = Number(env.SMTP_PORT) || (secure ? 465 : 587)
    return {
      host,
      port,
      secure,
      auth: env.SMTP_USER ? { user: env.SMTP_USER, pass: env.SMTP_PASSWORD ?? '' } : undefined,
    }
  }
  const dir = env.CONETRAIL_MAILBOX_DIR || defaultMailboxDir(loadConfig(env).dataDir)
  return runningSink(dir)?.url ?? null
}

let cached: { key: string; transporter: Transporter } | undefined

function transporter(): Transporter {
  const opts = transportOptions()
  if (!opts) throw new MailError('mail_not_configured', 'No SMTP server is configured (SMTP_URL or SMTP_HOST) and no local mail sink is running')
  const key = JSON.stringify(opts)
  if (cached?.key !== key) {
    cached?.transporter.close()
    cached = { key, transporter: nodemailer.createTransport(opts) }
  }
  return cached.transporter
}

/**
 * Sends one message from MAIL_FROM.
 * @throws MailError `mail_not_configured` when there is no SMTP server, `mail_failed` (with the
 * server's words) when the server cannot be reached or refuses the message.
 */
export async function sendMail(mail: OutgoingMail): Promise<{ messageId: string; accepted: string[] }> {
  const smtp = transporter()
  let info: SMTPTransport.SentMessageInfo
  try {
    info = (await smtp.sendMail({
      from: process.env.MAIL_FROM?.trim() || DEFAULT_MAIL_FROM,
      to: mail.to,
      subject: mail.subject,
      text: mail.text,
      html: mail.html,
      attachments: mail.attachments,
    })) as SMTPTransport.SentMessageInfo
  } catch (err) {
    throw new MailError('mail_failed', `The mail server refused the message: ${err instanceof Error ? err.message : String(err)}`)
  }
  return { messageId: info.messageId, accepted: (info.accepted as (string | { address: string })[]).map((a) => (typeof a === 'string' ? a : a.address)) }
}
