/** The files of a local-sink mailbox, shared by the sink (writer), the transport and the mailbox page (readers). */
import { readFile } from 'node:fs/promises'
import { join } from 'node:path'
import type { MailboxEntry } from '../../shared/types/mail'

/** Written while a sink listens: { port, pid }. */
export const SINK_FILE = 'sink.json'
/** Every message received, oldest first. */
export const INDEX_FILE = 'index.json'

export async function readIndex(dir: string): Promise<MailboxEntry[]> {
  try {
    return JSON.parse(await readFile(join(dir, INDEX_FILE), 'utf8')) as MailboxEntry[]
  } catch {
    return []
  }
}
