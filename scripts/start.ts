/**
 * npm start: PostgreSQL, migrations, demo seed (empty database only), first-run admin, build,
 * then the server (and the workers, once there are any) until Ctrl+C.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process'
import { resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import { loadConfig } from '../server/utils/config'
import { startForConfig, stopCluster } from './db'
import { loadEnvFile } from './env-file'
import { bootstrapAdmin, migrateLatest, seedDemoIfEmpty } from './migrate'

const root = resolve(fileURLToPath(import.meta.url), '../..')
/** Worker entry points started beside the server (workers/*.ts). */
const WORKERS: string[] = ['workers/analyze.ts']

function log(msg: string) {
  console.log(`[start] ${msg}`)
}

async function main() {
  process.chdir(root)
  loadEnvFile(resolve(root, '.env'))
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

  const env = {
    ...process.env,
    HOST: cfg.host,
    PORT: String(cfg.port),
    DATABASE_URL: cfg.databaseUrl,
    CONETRAIL_DATA_DIR: cfg.dataDir,
    NODE_ENV: 'production',
  }
  const children: ChildProcess[] = [
    spawn(process.execPath, [resolve(root, '.output/server/index.mjs')], { stdio: 'inherit', env }),
    ...WORKERS.map((w) => spawn(process.execPath, ['--import', 'tsx', resolve(root, w)], { stdio: 'inherit', env })),
  ]
  log(`Conetrail on http://${cfg.host}:${cfg.port} (Ctrl+C stops it)`)

  let stopping = false
  const stop = (code: number) => {
    if (stopping) return
    stopping = true
    for (const c of children) c.kill('SIGTERM')
    if (!cfg.externalDatabase) stopCluster({ dataDir: cfg.dataDir })
    process.exit(code)
  }
  process.on('SIGINT', () => stop(0))
  process.on('SIGTERM', () => stop(0))
  for (const c of children) c.on('exit', (code) => stop(code ?? 1))
}

main().catch((err: unknown) => {
  console.error(`[start] ${err instanceof Error ? err.message : String(err)}`)
  process.exit(1)
})
