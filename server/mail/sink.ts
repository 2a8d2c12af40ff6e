/**
 * The local mail sink: a fake SMTP server on 127.0.0.1 that accepts every message and keeps it as
 * `<mailbox>/<id>.eml` plus a line in `<mailbox>/index.json`. `npm start` runs it when no SMTP server
 * is configured, and the test stack always does; admins read it at /dev/mailbox.
 *
 * It also writes `<mailbox>/sink.json` ({ port, pid }) while it listens, so a process that was given
 * the data directory but no SMTP settings (a worker a test started by hand) still finds it.
 */
import { rmSync } from 'node:fs'
import { mkdir, rm, writeFile, rename } from 'node:fs/promises'
import { join } from 'node:path'
import { SMTPServer } from 'smtp-server'
import type { MailboxEntry } from '../../shared/types/mail'
import { INDEX_FILE, readIndex, SINK_FILE } from './files'
import { parseMessage } from './mime'

/** Largest message kept (a lot report PDF is a few hundred kB). */
const MAX_MESSAGE_BYTES = 25 * 1024 * 1024
/** Default sink port = web port + this. */
export const SINK_PORT_OFFSET = 25

export interface MailSink {
  port: number
  dir: string
  /** smtp://127.0.0.1:<port> for SMTP_URL. */
  url: string
  close(): Promise<void>
  /** Removes sink.json at once (for a process about to exit without awaiting close). */
  forgetSync(): void
}

export interface SinkOptions {
  dir: string
  /** 0 (default) picks a free port. */
  port?: number
  /** Empty the mailbox first (the test stack starts with an empty one). */
  clear?: boolean
}

/** Starts the sink; resolves once it listens. @throws the listen error (e.g. EADDRINUSE). */
export async function startMailSink(o: SinkOptions): Promise<MailSink> {
  if (o.clear) await rm(o.dir, { recursive: true, force: true })
  await mkdir(o.dir, { recursive: true })
  let sequence = 0
  // Index writes one after another, so two messages arriving together both end up in it.
  let queue: Promise<unknown> = Promise.resolve()
  const store = (raw: Buffer, envelopeFrom: string, envelopeTo: string[]) => {
    const receivedAt = new Date()
    const id = `${receivedAt.getTime()}-${String(++sequence).padStart(4, '0')}`
    const parsed = parseMessage(raw.toString('utf8'))
    const entry: MailboxEntry = {
      id,
      receivedAt: receivedAt.toISOString(),
      envelopeFrom,
      envelopeTo,
      from: parsed.from,
      to: parsed.to,
      subject: parsed.subject,
      date: parsed.date,
      attachments: parsed.attachments,
      size: raw.length,
    }
    const next = queue.then(async () => {
      await writeFile(join(o.dir, `${id}.eml`), raw)
      const index = await readIndex(o.dir)
      index.push(entry)
      // Write then rename: a reader never sees half an index.
      const tmp = join(o.dir, `${INDEX_FILE}.${process.pid}.tmp`)
      await writeFile(tmp, JSON.stringify(index, null, 1))
      await rename(tmp, join(o.dir, INDEX_FILE))
    })
    queue = next.catch(() => {})
    return next
  }

  const server = new SMTPServer({
    secure: false,
    disabledCommands: ['STARTTLS'],
    hideSTARTTLS: true,
    authOptional: true,
    // Any credentials pass: the sink stands in for a real server whose SMTP_URL may carry them.
    onAuth: (auth, _session, cb) => cb(null, { user: auth.username ?? 'sink' }),
    size: MAX_MESSAGE_BYTES,
    logger: false,
    banner: 'Conetrail local mail sink',
    onData(stream, session, cb) {
      const chunks: Buffer[] = []
      stream.on('data', (c: Buffer) => chunks.push(c))
      stream.on('end', () => {
        if ((stream as unknown as { sizeExceeded?: boolean }).sizeExceeded) {
          cb(Object.assign(new Error('Message too large'), { responseCode: 552 }))
          return
        }
        const from = session.envelope.mailFrom ? session.envelope.mailFrom.address : ''
        store(Buffer.concat(chunks), from, session.envelope.rcptTo.map((r) => r.address)).then(
          () => cb(null),
          (err: unknown) => cb(err instanceof Error ? err : new Error(String(err))),
        )
      })
    },
  })
  const port = await new Promise<number>((ok, fail) => {
    server.once('error', fail)
    server.listen(o.port ?? 0, '127.0.0.1', () => {
      server.off('error', fail)
      const addr = server.server.address()
      ok(typeof addr === 'object' && addr ? addr.port : 0)
    })
  })
  server.on('error', (err) => console.error(`[mail sink] ${err.message}`))
  const sinkFile = join(o.dir, SINK_FILE)
  await writeFile(sinkFile, JSON.stringify({ port, pid: process.pid }))
  return {
    port,
    dir: o.dir,
    url: `smtp://127.0.0.1:${port}`,
    async close() {
      await rm(sinkFile, { force: true })
      await queue
      await new Promise<void>((r) => server.close(() => r()))
    },
    forgetSync() {
      rmSync(sinkFile, { force: true })
    },
  }
}

/** The sink's port: CONETRAIL_SMTP_SINK_PORT, else the web port + 25 (so instances side by side differ). */
export function sinkPort(env: NodeJS.ProcessEnv, webPort: number): number {
  const raw = env.CONETRAIL_SMTP_SINK_PORT
  if (!raw) return webPort + SINK_PORT_OFFSET
  const n = Number(raw)
  if (!(Number.isInteger(n) && n >= 0 && n <= 65535)) throw new Error(`CONETRAIL_SMTP_SINK_PORT must be a port number, got "${raw}"`)
  return n
}

/** Starts the sink on its port, or on a free one when that port is taken (a second instance, a stale process). */
export async function startMailSinkOrFreePort(o: SinkOptions): Promise<MailSink> {
  try {
    return await startMailSink(o)
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code !== 'EADDRINUSE' || !o.port) throw err
    return startMailSink({ ...o, port: 0 })
  }
}
