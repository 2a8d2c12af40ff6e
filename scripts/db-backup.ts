/**
 * npm run db:backup [-- --with-recordings] [--out <file>]
 *
 * A pg_dump of the project's database in PostgreSQL's custom format (compressed; pg_restore can
 * restore all of it or single tables) into <data dir>/backups/conetrail-<UTC timestamp>.dump, and
 * prints the file's path. Uses Debian's pg_dump (/usr/lib/postgresql/<version>/bin) like
 * scripts/db.ts, else the one on PATH. The database must be running (npm run db:start).
 *
 * Raw recordings and the photos/documents attached to returns live outside the database, in
 * <data dir>/recordings and <data dir>/attachments. With --with-recordings the script also writes
 * both folders into conetrail-<timestamp>-recordings.tar beside the dump, AFTER the dump: a file
 * is stored before its row commits, so every recording the dump knows is in the archive (files
 * added in between are harmless extras). Stored files never change, so an incremental copy
 * (rsync) of that folder after each dump is the cheaper choice for a large store.
 */
import { execFile } from 'node:child_process'
import { chmodSync, existsSync, mkdirSync, renameSync, rmSync, statSync } from 'node:fs'
import { dirname, join, resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import { loadConfig, type ConetrailConfig } from '../server/utils/config'
import { findPgBin } from './db'
import { loadEnvFile } from './env-file'

/** The folders of stored files (under the data dir) that the archive holds. */
export const FILE_FOLDERS = ['recordings', 'attachments'] as const

const root = resolve(fileURLToPath(import.meta.url), '../..')

function log(msg: string) {
  console.error(`[backup] ${msg}`)
}

/** A Debian PostgreSQL client program (pg_dump, pg_restore), or the one on PATH. */
export function pgTool(name: 'pg_dump' | 'pg_restore'): string {
  const bin = findPgBin()
  return bin && existsSync(join(bin, name)) ? join(bin, name) : name
}

/**
 * The connection for libpq tools: the URL without its password (a command line is visible to every
 * user of the machine) and the password in PGPASSWORD.
 */
export function libpqTarget(databaseUrl: string): { url: string; env: NodeJS.ProcessEnv } {
  const u = new URL(databaseUrl)
  const password = decodeURIComponent(u.password)
  u.password = ''
  return { url: u.toString(), env: { ...process.env, ...(password ? { PGPASSWORD: password } : {}) } }
}

export function run(file: string, args: string[], env: NodeJS.ProcessEnv): Promise<string> {
  return new Promise((ok, fail) => {
    execFile(file, args, { env, encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 }, (err, stdout, stderr) => {
      if (err) fail(new Error(`${file.split('/').pop()} failed: ${(stderr || err.message).trim()}`))
      else ok(stdout)
    })
  })
}

function timestamp(now = new Date()): string {
  return now.toISOString().replace(/[-:]/g, '').replace(/\.\d+Z$/, 'Z')
}

export interface BackupResult {
  dump: string
  recordings: string | null
}

/** Dumps the configured database (and optionally the recording files); returns the paths written. */
export async function backup(cfg: ConetrailConfig, opts: { out?: string; withRecordings?: boolean } = {}): Promise<BackupResult> {
  const stamp = timestamp()
  const dump = resolve(opts.out ?? join(cfg.dataDir, 'backups', `conetrail-${stamp}.dump`))
  mkdirSync(dirname(dump), { recursive: true })
  const partial = `${dump}.partial`
  const { url, env } = libpqTarget(cfg.databaseUrl)
  try {
    // Custom format, no owner or grants: restorable into a database of another name or owner.
    await run(pgTool('pg_dump'), ['--format=custom', '--no-owner', '--no-privileges', `--file=${partial}`, `--dbname=${url}`], env)
    // The dump holds users' password hashes and every result: readable by its owner only.
    chmodSync(partial, 0o600)
    renameSync(partial, dump)
  } finally {
    rmSync(partial, { force: true })
  }
  let recordings: string | null = null
  if (opts.withRecordings) {
    recordings = dump.replace(/\.dump$/, '') + '-recordings.tar'
    const tmp = `${recordings}.partial`
    try {
      // An empty store still gives an archive, so a restore finds what it expects.
      for (const folder of FILE_FOLDERS) mkdirSync(join(cfg.dataDir, folder), { recursive: true })
      await run('tar', ['-cf', tmp, '-C', cfg.dataDir, ...FILE_FOLDERS], process.env)
      chmodSync(tmp, 0o600)
      renameSync(tmp, recordings)
    } finally {
      rmSync(tmp, { force: true })
    }
  }
  return { dump, recordings }
}

async function main() {
  // The same settings as npm start (DATABASE_URL, PG*), when a .env exists.
  if (existsSync(resolve(root, '.env'))) loadEnvFile(resolve(root, '.env'))
  const args = process.argv.slice(2)
  const outAt = args.indexOf('--out')
  const cfg = loadConfig()
  const res = await backup(cfg, { out: outAt >= 0 ? args[outAt + 1] : undefined, withRecordings: args.includes('--with-recordings') })
  log(`database "${cfg.pg.database}" dumped (${(statSync(res.dump).size / 1048576).toFixed(1)} MB)`)
  if (res.recordings) log(`recordings archived (${(statSync(res.recordings).size / 1048576).toFixed(1)} MB)`)
  // The paths alone on stdout, so scripts can capture them.
  console.log(res.dump)
  if (res.recordings) console.log(res.recordings)
}

if (resolve(process.argv[1] ?? '') === fileURLToPath(import.meta.url)) {
  main().catch((err: unknown) => {
    log(err instanceof Error ? err.message : String(err))
    process.exit(1)
  })
}
