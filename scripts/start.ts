/**
 * npm start: PostgreSQL, migrations, demo seed (empty database only), first-run admin, build,
 * then the server and the analysis workers until Ctrl+C.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process'
import { resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import { defaultMailboxDir, smtpConfigured } from '../server/mail/index'
import { sinkPort, startMailSinkOrFreePort } from '../server/mail/sink'
import { loadConfig } from '../server/utils/config'
import { startForConfig, stopCluster } from './db'
import { loadEnvFile } from './env-file'
import { bootstrapAdmin, migrateLatest, seedDemoIfEmpty } from './migrate'

const root = resolve(fileURLToPath(import.meta.url), '../..')
/** Worker entry point started beside the server. */
const ANALYZE_WORKER = 'workers/analyze.ts'
/**
 * Analysis worker processes: two by default, because `npm run bench:load` on a 2-core machine
 * showed p95 upload-to-verdict of 46.5 s with one and 13.6 s with two under the same load.
 */
function workerCount(env: NodeJS.ProcessEnv): number {
  const n = Number(env.CONETRAIL_WORKERS ?? 2)
  if (!Number.isInteger(n) || n < 1 || n > 32) throw new Error('CONETRAIL_WORKERS must be a whole number from 1 to 32')
  return n
}

function log(msg: string) {
  console.log(`[start] ${msg}`)
}

async function main() {
  process.chdir(root)
  loadEnvFile(resolve(root, '.env'))
  const count = workerCount(process.env)
  await startForConfig(loadConfig())
  // Read again: on the very first start the database password was generated just now.
  const cfg = loadConfig()
  const applied = await migrateLatest(cfg)
  log(applied.length ? `migrations applied: ${applied.length}` : 'database schema up to date')
  if (cfg.demo && (await seedDemoIfEmpty(cfg))) log('empty database: demo data loaded (README, "Demo accounts")')
  if (await bootstrapAdmin(cfg)) log(`admin ${cfg.bootstrapAdmin?.email} created`)

  if (process.env.CONETRAIL_SKIP_BUILD !== '1') {
    log('building the application...')
    const b = spawnSync(process.execPath, [resolve(root, 'node_modules/nuxt/bin/nuxt.mjs'), 'build'], { stdio: 'inherit' })
    if (b.status !== 0) throw new Error('nuxt build failed')
  }

  // No SMTP server configured: a local sink keeps the mail; admins read it at /dev/mailbox.
  const sink = smtpConfigured() ? null : await startMailSinkOrFreePort({ dir: defaultMailboxDir(cfg.dataDir), port: sinkPort(process.env, cfg.port) })
  log(sink ? `no SMTP server configured: mail goes to the local sink ${sink.url}, kept in ${sink.dir} (admins: /dev/mailbox)` : 'mail goes to the configured SMTP server')

  const env = {
    ...process.env,
    ...(sink ? { SMTP_URL: sink.url, CONETRAIL_MAILBOX_DIR: sink.dir } : {}),
    HOST: cfg.host,
    PORT: String(cfg.port),
    DATABASE_URL: cfg.databaseUrl,
    CONETRAIL_DATA_DIR: cfg.dataDir,
    NODE_ENV: 'production',
    // Cookies ignore ports: a name per port lets two instances on one host keep their own sessions.
    NUXT_SESSION_NAME: process.env.NUXT_SESSION_NAME ?? `conetrail-session-${cfg.port}`,
  }
  const server = spawn(process.execPath, [resolve(root, '.output/server/index.mjs')], { stdio: 'inherit', env })
  const workers = new Map<number, ChildProcess>()
  let stopping = false
  // A worker that dies (e.g. out of memory on one recording) is restarted with a growing pause;
  // the queue retries its job. The web server keeps serving meanwhile.
  const startWorker = (slot: number, restarts = 0) => {
    const entry = ANALYZE_WORKER
    const w = spawn(process.execPath, ['--import', 'tsx', resolve(root, entry)], { stdio: 'inherit', env })
    workers.set(slot, w)
    const started = Date.now()
    w.on('exit', (code, signal) => {
      if (stopping) return
      const next = Date.now() - started > 60_000 ? 0 : restarts + 1
      const pauseMs = Math.min(30_000, 1000 * 2 ** next)
      log(`worker ${slot + 1} (${entry}) ended (${signal ?? `exit ${code}`}); restarting in ${pauseMs / 1000} s`)
      setTimeout(() => !stopping && startWorker(slot, next), pauseMs)
    })
  }
  for (let slot = 0; slot < count; slot++) startWorker(slot)
  log(`${count} analysis worker${count === 1 ? '' : 's'} started`)
  log(`Conetrail on http://${cfg.host}:${cfg.port} (Ctrl+C stops it)`)

  const stop = (code: number) => {
    if (stopping) return
    stopping = true
    for (const c of [server, ...workers.values()]) c.kill('SIGTERM')
    sink?.forgetSync()
    if (!cfg.externalDatabase) stopCluster({ dataDir: cfg.dataDir })
    process.exit(code)
  }
  process.on('SIGINT', () => stop(0))
  process.on('SIGTERM', () => stop(0))
  server.on('exit', (code) => stop(code ?? 1))
}

main().catch((err: unknown) => {
  console.error(`[start] ${err instanceof Error ? err.message : String(err)}`)
  process.exit(1)
})
