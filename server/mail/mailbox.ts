/** Reading the local sink's mailbox (the dev mailbox page). */
import { readFile } from 'node:fs/promises'
import { join } from 'node:path'
import type { MailboxEntry, MailboxMessage } from '../../shared/types/mail'
import { parseMessage } from './mime'
import { readIndex } from './files'

/** Ids are `<ms>-<sequence>`: anything else never names a file. */
const ID_PATTERN = /^\d{1,16}-\d{1,8}$/

/** Messages newest first. */
export async function listMailbox(dir: string): Promise<MailboxEntry[]> {
  return (await readIndex(dir)).reverse()
}

/** One message with its text and raw source; null when there is none with this id. */
export async function getMailboxMessage(dir: string, id: string): Promise<MailboxMessage | null> {
  if (!ID_PATTERN.test(id)) return null
  const entry = (await readIndex(dir)).find((e) => e.id === id)
  if (!entry) return null
  const raw = await readFile(join(dir, `${id}.eml`), 'utf8').catch(() => null)
  if (raw === null) return null
  const { text, html } = parseMessage(raw)
  return { ...entry, text, html, raw }
}
