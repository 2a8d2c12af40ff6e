/**
 * The project's own PostgreSQL: a cluster in the data directory, listening on 127.0.0.1 only.
 *
 *   node --import tsx scripts/db.ts start|stop|status|reset
 *
 * Finds Debian's binaries (/usr/lib/postgresql/<version>/bin), installs them with apt-get when
 * missing and running as root, and runs the server as the `postgres` system user when started
 * as root (PostgreSQL refuses to run as root).
 */
import { execFile, execFileSync, spawnSync } from 'node:child_process'
import { randomBytes } from 'node:crypto'
import { chmodSync, chownSync, existsSync, mkdirSync, readFileSync, readdirSync, rmSync, statSync, writeFileSync } from 'node:fs'
import { dirname, join, resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import pg from 'pg'
import { dbPasswordFile, loadConfig, type ConetrailConfig } from '../server/utils/config'

const PG_ROOT = '/usr/lib/postgresql'
const SYSTEM_USER = 'postgres'
const isRoot = process.getuid?.() === 0

export interface ClusterOptions {
  dataDir: string
  port: number
  user: string
  /** Test clusters trade durability for speed; never used for the start command. */
  fast?: boolean
}

function log(msg: string) {
  console.log(`[db] ${msg}`)
}

/** Newest installed PostgreSQL version's bin folder, or null. */
export function findPgBin(): string | null {
  if (!existsSync(PG_ROOT)) return null
  const versions = readdirSync(PG_ROOT)
    .filter((v) => existsSync(join(PG_ROOT, v, 'bin', 'initdb')))
    .sort((a, b) => Number(b) - Number(a))
  return versions.length ? join(PG_ROOT, versions[0]!, 'bin') : null
}

/** Returns the bin folder, installing Debian's postgresql package first when it is missing. */
export function ensurePgInstalled(): string {
  const found = findPgBin()
  if (found) return found
  if (!isRoot) {
    throw new Error(
      'PostgreSQL server binaries were not found under /usr/lib/postgresql. Install them once with\n' +
        '  sudo apt-get install -y postgresql\nand run this command again.',
    )
  }
  log('PostgreSQL not found: installing Debian package "postgresql" (about a minute)...')
  // No system-wide cluster on port 5432: the project runs its own.
  mkdirSync('/etc/postgresql-common', { recursive: true })
  writeFileSync('/etc/postgresql-common/createcluster.conf', 'create_main_cluster = false\n')
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
  for (const args of [['update'], ['install', '-y', '--no-install-recommends', 'postgresql']]) {
    const r = spawnSync('apt-get', args, { stdio: 'inherit', env })
    if (r.status !== 0) throw new Error(`apt-get ${args.join(' ')} failed (exit ${r.status}); install PostgreSQL by hand.`)
  }
  const bin = findPgBin()
  if (!bin) throw new Error('apt-get finished but no PostgreSQL binaries were found under /usr/lib/postgresql')
  return bin
}

function ensureSystemUser() {
  const r = spawnSync('id', ['-u', SYSTEM_USER])
  if (r.status === 0) return
  log(`creating system user "${SYSTEM_USER}"`)
  execFileSync('useradd', ['--system', '--user-group', '--no-create-home', '--shell', '/usr/sbin/nologin', SYSTEM_USER])
}

function systemIds(): { uid: number; gid: number } {
  const uid = Number(execFileSync('id', ['-u', SYSTEM_USER]).toString().trim())
  const gid = Number(execFileSync('id', ['-g', SYSTEM_USER]).toString().trim())
  return { uid, gid }
}

/** Every parent of dir must be traversable by the postgres user. */
function ensureTraversable(dir: string) {
  let d = dirname(dir)
  while (true) {
    const mode = statSync(d).mode
    if ((mode & 0o001) === 0) {
      log(`adding o+x to ${d} so the postgres user can reach the data directory`)
      chmodSync(d, mode | 0o001)
    }
    const up = dirname(d)
    if (up === d) break
    d = up
  }
}

function pgRun(bin: string, cmd: string, args: string[], opts: { allowFail?: boolean } = {}) {
  const exe = join(bin, cmd)
  const [file, argv] = isRoot ? ['runuser', ['-u', SYSTEM_USER, '--', exe, ...args]] : [exe, args]
  const r = spawnSync(file, argv, { encoding: 'utf8' })
  if (r.status !== 0 && !opts.allowFail) {
    throw new Error(`${cmd} failed (exit ${r.status}):\n${r.stdout ?? ''}${r.stderr ?? ''}`)
  }
  return r
}

function clusterDir(dataDir: string) {
  return join(dataDir, 'postgres')
}

/** Creates the cluster and its password on first use. Returns the password. */
function ensureCluster(bin: string, o: ClusterOptions): string {
  const dir = clusterDir(o.dataDir)
  const pwFile = dbPasswordFile(o.dataDir)
  mkdirSync(o.dataDir, { recursive: true })
  if (existsSync(join(dir, 'PG_VERSION'))) {
    if (!existsSync(pwFile)) throw new Error(`${pwFile} is missing; the cluster in ${dir} cannot be reached (npm run db:reset -- --wipe recreates it)`)
    return readFileSync(pwFile, 'utf8').trim()
  }
  log(`creating a new cluster in ${dir}`)
  const password = randomBytes(18).toString('base64url')
  writeFileSync(pwFile, password + '\n', { mode: 0o600 })
  mkdirSync(dir, { recursive: true })
  chmodSync(dir, 0o700)
  // initdb reads the superuser password from a file; it lives inside the cluster folder only
  // for the duration of initdb, readable by its owner alone.
  const initPw = join(o.dataDir, `.initdb-pw-${process.pid}`)
  writeFileSync(initPw, password + '\n', { mode: 0o600 })
  if (isRoot) {
    ensureSystemUser()
    const { uid, gid } = systemIds()
    ensureTraversable(dir)
    chownSync(dir, uid, gid)
    chownSync(initPw, uid, gid)
  }
  try {
    pgRun(bin, 'initdb', [
      '-D', dir, '-U', o.user, `--pwfile=${initPw}`,
      '--auth-host=scram-sha-256', '--auth-local=scram-sha-256', '-E', 'UTF8', '--locale=C',
    ])
  } finally {
    rmSync(initPw, { force: true })
  }
  return password
}

function isRunning(bin: string, dir: string): boolean {
  if (!existsSync(join(dir, 'PG_VERSION'))) return false
  return pgRun(bin, 'pg_ctl', ['-D', dir, 'status'], { allowFail: true }).status === 0
}

function runningPort(dir: string): number | null {
  try {
    const lines = readFileSync(join(dir, 'postmaster.pid'), 'utf8').split('\n')
    return Number(lines[3])
  } catch {
    return null
  }
}

/** Starts the cluster (idempotent). Returns the connection password. */
export function startCluster(o: ClusterOptions): string {
  const bin = ensurePgInstalled()
  const password = ensureCluster(bin, o)
  const dir = clusterDir(o.dataDir)
  if (isRunning(bin, dir)) {
    const p = runningPort(dir)
    if (p !== o.port) throw new Error(`PostgreSQL in ${dir} already runs on port ${p}, not ${o.port}; stop it first (npm run db:stop)`)
    log(`already running on 127.0.0.1:${o.port}`)
    return password
  }
  const opts = ["-c listen_addresses=127.0.0.1", `-c port=${o.port}`, "-c unix_socket_directories=''"]
  if (o.fast) opts.push('-c fsync=off', '-c synchronous_commit=off', '-c full_page_writes=off')
  const logFile = join(dir, 'server.log')
  const r = pgRun(bin, 'pg_ctl', ['-D', dir, '-l', logFile, '-w', '-t', '60', 'start', '-o', opts.join(' ')], { allowFail: true })
  if (r.status !== 0) {
    const tail = existsSync(logFile) ? readFileSync(logFile, 'utf8').split('\n').slice(-15).join('\n') : ''
    throw new Error(`PostgreSQL did not start on 127.0.0.1:${o.port} (is the port taken?).\n${tail}`)
  }
  log(`started on 127.0.0.1:${o.port} (data in ${dir})`)
  return password
}

/** Stops the cluster if it runs (idempotent). */
export function stopCluster(o: Pick<ClusterOptions, 'dataDir'>) {
  const bin = findPgBin()
  const dir = clusterDir(o.dataDir)
  if (!bin || !isRunning(bin, dir)) {
    log('not running')
    return
  }
  pgRun(bin, 'pg_ctl', ['-D', dir, '-m', 'fast', '-w', 'stop'])
  log('stopped')
}

/**
 * Stops or starts a cluster that startCluster created, without blocking the event loop: fault
 * tests restart PostgreSQL while their simulated stations keep sending in the same process.
 * Starting uses the same options as startCluster (loopback only, `fast` for test clusters).
 */
export function pgCtlAsync(o: ClusterOptions, action: 'start' | 'stop'): Promise<void> {
  const bin = findPgBin()
  if (!bin) return Promise.reject(new Error('PostgreSQL binaries not found under /usr/lib/postgresql'))
  const dir = clusterDir(o.dataDir)
  const opts = ['-c listen_addresses=127.0.0.1', `-c port=${o.port}`, "-c unix_socket_directories=''"]
  if (o.fast) opts.push('-c fsync=off', '-c synchronous_commit=off', '-c full_page_writes=off')
  const args = action === 'stop' ? ['-D', dir, '-m', 'fast', '-w', 'stop'] : ['-D', dir, '-l', join(dir, 'server.log'), '-w', '-t', '60', 'start', '-o', opts.join(' ')]
  const exe = join(bin, 'pg_ctl')
  const [file, argv] = isRoot ? ['runuser', ['-u', SYSTEM_USER, '--', exe, ...args]] : [exe, args]
  return new Promise((ok, fail) => {
    execFile(file, argv, { encoding: 'utf8' }, (err, stdout, stderr) => (err ? fail(new Error(`pg_ctl ${action} failed: ${stdout}${stderr}`)) : ok()))
  })
}

/** Creates a database on the cluster when it does not exist; with `fresh`, drops it first. */
export async function ensureDatabase(adminUrl: string, name: string, opts: { fresh?: boolean } = {}) {
  const client = new pg.Client({ connectionString: adminUrl })
  await client.connect()
  try {
    const ident = client.escapeIdentifier(name)
    if (opts.fresh) await client.query(`DROP DATABASE IF EXISTS ${ident} WITH (FORCE)`)
    const { rowCount } = await client.query('SELECT 1 FROM pg_database WHERE datname = $1', [name])
    if (!rowCount) await client.query(`CREATE DATABASE ${ident}`)
  } finally {
    await client.end()
  }
}

/** Starts the project's cluster for a configuration and makes sure its database exists. */
export async function startForConfig(cfg: ConetrailConfig, opts: { fast?: boolean } = {}) {
  if (cfg.externalDatabase) {
    log('DATABASE_URL is set: using that server, not starting one')
    return
  }
  const password = startCluster({ dataDir: cfg.dataDir, port: cfg.pg.port, user: cfg.pg.user, fast: opts.fast })
  cfg.pg.password = password
  const admin = `postgres://${encodeURIComponent(cfg.pg.user)}:${encodeURIComponent(password)}@${cfg.pg.host}:${cfg.pg.port}/postgres`
  await ensureDatabase(admin, cfg.pg.database)
}

async function main() {
  const cmd = process.argv[2]
  const cfg = loadConfig()
  const o = { dataDir: cfg.dataDir, port: cfg.pg.port, user: cfg.pg.user }
  switch (cmd) {
    case 'start':
      await startForConfig(cfg)
      break
    case 'stop':
      stopCluster(o)
      break
    case 'status': {
      const bin = findPgBin()
      const dir = clusterDir(cfg.dataDir)
      log(bin && isRunning(bin, dir) ? `running on 127.0.0.1:${runningPort(dir)} (${dir})` : `not running (${dir})`)
      break
    }
    case 'reset': {
      // Drops and recreates the database (all data in it), then migrates and seeds the demo.
      if (!process.argv.includes('--yes')) {
        console.error(`This deletes every unit, recording and user in database "${cfg.pg.database}". Run: npm run db:reset -- --yes`)
        process.exit(2)
      }
      await startForConfig(cfg)
      const loaded = loadConfig()
      await ensureDatabase(loaded.databaseUrl.replace(/\/[^/]*$/, '/postgres'), cfg.pg.database, { fresh: true })
      const { migrateLatest, seedDemoIfEmpty } = await import('./migrate.ts')
      await migrateLatest(loaded)
      await seedDemoIfEmpty(loaded)
      log(`database "${cfg.pg.database}" recreated, migrated and seeded`)
      break
    }
    default:
      console.error('usage: scripts/db.ts start|stop|status|reset --yes')
      process.exit(2)
  }
}

if (resolve(process.argv[1] ?? '') === fileURLToPath(import.meta.url)) {
  main().catch((err: unknown) => {
    console.error(`[db] ${err instanceof Error ? err.message : String(err)}`)
    process.exit(1)
  })
}
