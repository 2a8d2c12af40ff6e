/**
 * The local mail sink on its own: node --import tsx scripts/smtp-sink.ts
 * Listens on 127.0.0.1:CONETRAIL_SMTP_SINK_PORT (default PORT + 25, a free port when taken) and keeps
 * every message in `<data dir>/mailbox/`. `npm start` runs the same sink itself when no SMTP server
 * is configured; run this one to catch the mail of `npm run dev` (set SMTP_URL to the URL it prints).
 */
import { resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import { defaultMailboxDir } from '../server/mail/index'
import { sinkPort, startMailSinkOrFreePort } from '../server/mail/sink'
import { loadConfig } from '../server/utils/config'
import { loadEnvFile } from './env-file'

const root = resolve(fileURLToPath(import.meta.url), '../..')

async function main() {
  process.chdir(root)
  loadEnvFile(resolve(root, '.env'))
  const cfg = loadConfig()
  const sink = await startMailSinkOrFreePort({ dir: defaultMailboxDir(cfg.dataDir), port: sinkPort(process.env, cfg.port) })
  console.log(`[mail sink] listening on ${sink.url}; messages in ${sink.dir}`)
  const stop = () => void sink.close().then(() => process.exit(0))
  process.on('SIGINT', stop)
  process.on('SIGTERM', stop)
}

main().catch((err: unknown) => {
  console.error(`[mail sink] ${err instanceof Error ? err.message : String(err)}`)
  process.exit(1)
})
