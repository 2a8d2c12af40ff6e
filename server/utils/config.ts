import { DomainError } from '../../shared/utils/domain-error'
import { existsSync, readFileSync } from 'node:fs'
import { isAbsolute, join, resolve } from 'node:path'

/** Runtime configuration read from the environment (documented in README.md, "Configuration"). */
export interface ConetrailConfig {
  /** Where PostgreSQL data and stored recordings live. */
  dataDir: string
  host: string
  port: number
  pg: { host: string; port: number; user: string; password: string | undefined; database: string }
  /** Connection string for Knex/pg: DATABASE_URL when set, else built from the PG* variables. */
  databaseUrl: string
  /** True when DATABASE_URL points elsewhere: the project then does not start its own PostgreSQL. */
  externalDatabase: boolean
  demo: boolean
  bootstrapAdmin: { email: string; password: string } | null
}

export const DEFAULTS = {
  dataDir: '.data',
  host: '127.0.0.1',
  port: 3000,
  pgPort: 54329,
  pgUser: 'conetrail',
  pgDatabase: 'conetrail',
} as const

/** Raised for an environment value that cannot be used; the message names the variable. */
export class ConfigError extends DomainError<'invalid_config'> {
  constructor(message: string) {
    super('invalid_config', message)
  }
}

function parsePort(name: string, raw: string | undefined, fallback: number): number {
  if (raw === undefined || raw === '') return fallback
  const n = Number(raw)
  if (!Number.isInteger(n) || n < 1 || n > 65535) throw new ConfigError(`${name} must be a port number (1-65535), got "${raw}"`)
  return n
}

/** The file in the data directory holding the generated database password. */
export function dbPasswordFile(dataDir: string): string {
  return join(dataDir, 'db-password')
}

/**
 * Reads the configuration from an environment (process.env by default).
 * @throws ConfigError when a value is malformed (bad port, bad DATABASE_URL).
 */
export function loadConfig(env: NodeJS.ProcessEnv = process.env, cwd = process.cwd()): ConetrailConfig {
  const rawDir = env.CONETRAIL_DATA_DIR || DEFAULTS.dataDir
  const dataDir = isAbsolute(rawDir) ? rawDir : resolve(cwd, rawDir)
  const port = parsePort('PORT', env.PORT, DEFAULTS.port)
  const pgPort = parsePort('PGPORT', env.PGPORT, DEFAULTS.pgPort)
  const pwFile = dbPasswordFile(dataDir)
  const password = env.PGPASSWORD || (existsSync(pwFile) ? readFileSync(pwFile, 'utf8').trim() : undefined)
  const pg = {
    host: env.PGHOST || '127.0.0.1',
    port: pgPort,
    user: env.PGUSER || DEFAULTS.pgUser,
    password,
    database: env.PGDATABASE || DEFAULTS.pgDatabase,
  }
  let databaseUrl: string
  const externalDatabase = Boolean(env.DATABASE_URL)
  if (env.DATABASE_URL) {
    try {
      const u = new URL(env.DATABASE_URL)
      if (!/^postgres(ql)?:$/.test(u.protocol)) throw new Error('protocol')
    } catch {
      throw new ConfigError('DATABASE_URL must be a postgres:// or postgresql:// URL')
    }
    databaseUrl = env.DATABASE_URL
  } else {
    const auth = pg.password ? `${encodeURIComponent(pg.user)}:${encodeURIComponent(pg.password)}` : encodeURIComponent(pg.user)
    databaseUrl = `postgres://${auth}@${pg.host}:${pg.port}/${encodeURIComponent(pg.database)}`
  }
  const email = env.CONETRAIL_ADMIN_EMAIL?.trim()
  const adminPassword = env.CONETRAIL_ADMIN_PASSWORD
  return {
    dataDir,
    host: env.HOST || DEFAULTS.host,
    port,
    pg,
    databaseUrl,
    externalDatabase,
    demo: env.CONETRAIL_DEMO !== '0',
    bootstrapAdmin: email && adminPassword ? { email, password: adminPassword } : null,
  }
}

/** The same URL pointing at another database on the same server (tests use their own). */
export function withDatabase(url: string, database: string): string {
  const u = new URL(url)
  u.pathname = `/${encodeURIComponent(database)}`
  return u.toString()
}
