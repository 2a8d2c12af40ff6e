/**
 * npm run db:restore -- <file.dump> [--database <name>] [--recordings <file.tar>] [--yes]
 *
 * Restores a dump made by npm run db:backup into a fresh database: <name>, or the configured one
 * (PGDATABASE / DATABASE_URL, default "conetrail"). A database that does not exist is created. One
 * that holds tables is left alone unless --yes is given: then it is dropped (open sessions ended)
 * and created again before the restore. Stop the server and the workers first when restoring the
 * database they use. With --recordings, the archive's files are unpacked into <data dir>/recordings
 * and <data dir>/attachments (files already there are kept; stored files never change). Prints the restored counts.
 */
import { existsSync, mkdirSync } from 'node:fs'
import { resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import pg from 'pg'
import { loadConfig, withDatabase } from '../server/utils/config'
import { FILE_FOLDERS, libpqTarget, pgTool, run } from './db-backup'
import { loadEnvFile } from './env-file'

const root = resolve(fileURLToPath(import.meta.url), '../..')

function log(msg: string) {
  console.error(`[restore] ${msg}`)
}

export class RestoreRefused extends Error {}

/** Counts of what was restored (read back from the database). */
export interface RestoreSummary {
  database: string
  units: number
  recordings: number
  results: number
}

async function withClient<T>(url: string, fn: (c: pg.Client) => Promise<T>): Promise<T> {
  const c = new pg.Client({ connectionString: url })
  await c.connect()
  try {
    return await fn(c)
  } finally {
    await c.end()
  }
}

/**
 * Restores `file` into database `name` on the configured server.
 * @throws RestoreRefused when the database holds tables and `overwrite` is false.
 */
export async function restore(databaseUrl: string, file: string, name: string, overwrite: boolean): Promise<RestoreSummary> {
  if (!existsSync(file)) throw new RestoreRefused(`${file} does not exist`)
  const adminUrl = withDatabase(databaseUrl, 'postgres')
  const targetUrl = withDatabase(databaseUrl, name)
  await withClient(adminUrl, async (c) => {
    const ident = c.escapeIdentifier(name)
    const exists = (await c.query('SELECT 1 FROM pg_database WHERE datname = $1', [name])).rowCount
    if (exists) {
      const tables = await withClient(targetUrl, async (t) => Number((await t.query("SELECT count(*) AS n FROM pg_tables WHERE schemaname NOT IN ('pg_catalog', 'information_schema')")).rows[0].n))
      if (tables > 0 && !overwrite) {
        throw new RestoreRefused(`database "${name}" is not empty (${tables} tables): add --yes to replace it, or choose another with --database <name>`)
      }
      if (tables > 0) log(`dropping database "${name}" (--yes)`)
      await c.query(`DROP DATABASE ${ident} WITH (FORCE)`)
    }
    await c.query(`CREATE DATABASE ${ident}`)
  })
  const { url, env } = libpqTarget(targetUrl)
  // One transaction: a dump that cannot be restored whole leaves an empty database, never half of one.
  await run(pgTool('pg_restore'), ['--no-owner', '--no-privileges', '--exit-on-error', '--single-transaction', `--dbname=${url}`, file], env)
  return withClient(targetUrl, async (c) => {
    const count = async (table: string) => Number((await c.query(`SELECT count(*) AS n FROM ${c.escapeIdentifier(table)}`)).rows[0].n)
    return { database: name, units: await count('units'), recordings: await count('recordings'), results: await count('results') }
  })
}

async function main() {
  if (existsSync(resolve(root, '.env'))) loadEnvFile(resolve(root, '.env'))
  const args = process.argv.slice(2)
  const valueOf = (flag: string) => {
    const i = args.indexOf(flag)
    return i >= 0 ? args[i + 1] : undefined
  }
  const flagValues = new Set(['--database', '--recordings'].map(valueOf))
  const file = args.find((a) => !a.startsWith('--') && !flagValues.has(a))
  if (!file) {
    console.error('usage: npm run db:restore -- <file.dump> [--database <name>] [--recordings <file.tar>] [--yes]')
    process.exit(2)
  }
  const cfg = loadConfig()
  const name = valueOf('--database') ?? cfg.pg.database
  try {
    const s = await restore(cfg.databaseUrl, resolve(file), name, args.includes('--yes'))
    log(`restored into "${s.database}": ${s.units} units, ${s.recordings} recordings, ${s.results} results`)
  } catch (err) {
    if (err instanceof RestoreRefused) {
      log(err.message)
      process.exit(3)
    }
    throw err
  }
  const archive = valueOf('--recordings')
  if (archive) {
    mkdirSync(cfg.dataDir, { recursive: true })
    // Only our folders are unpacked (an archive from before attachments holds recordings only);
    // an existing stored file is never overwritten (GNU tar --skip-old-files).
    const listed = await run('tar', ['-tf', resolve(archive)], process.env)
    const folders = FILE_FOLDERS.filter((f) => listed.split('\n').some((l) => l === f || l.startsWith(`${f}/`)))
    await run('tar', ['-xf', resolve(archive), '-C', cfg.dataDir, '--skip-old-files', ...folders], process.env)
    log(`${folders.join(' and ')} unpacked into ${resolve(cfg.dataDir)}`)
  }
}

if (resolve(process.argv[1] ?? '') === fileURLToPath(import.meta.url)) {
  main().catch((err: unknown) => {
    log(err instanceof Error ? err.message : String(err))
    process.exit(1)
  })
}
