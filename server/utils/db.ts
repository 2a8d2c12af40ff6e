import knex, { type Knex } from 'knex'
import { knexConfig } from '../../knexfile'
import { loadConfig } from './config'

let instance: Knex | undefined

/** The server's one Knex instance (connection from DATABASE_URL or the PG* variables). */
export function useDb(): Knex {
  instance ??= knex(knexConfig(loadConfig().databaseUrl))
  return instance
}

/**
 * SQLSTATE classes and socket errors that mean "the database cannot be reached right now"
 * (PostgreSQL restarting, shutting down, refusing connections), as opposed to a bad query.
 * From the PostgreSQL manual, appendix "PostgreSQL Error Codes": class 08 (connection exception),
 * 57P01 admin_shutdown, 57P02 crash_shutdown, 57P03 cannot_connect_now.
 */
const UNAVAILABLE_CODES = new Set([
  '08000', '08001', '08003', '08004', '08006', '57P01', '57P02', '57P03',
  'ECONNREFUSED', 'ECONNRESET', 'EPIPE', 'ETIMEDOUT', 'EHOSTUNREACH', 'ENETUNREACH',
])
const UNAVAILABLE_MESSAGE = /connection terminated|terminating connection|connection (?:error|ended)|the database system is (?:starting up|shutting down|in recovery mode)|Client was closed|Connection is closed/i

/**
 * True when an error (or one it wraps: `cause`, AggregateError's `errors`) says the database is
 * unreachable for now; the caller answers 503 and the client retries. Knex's pool timeout counts
 * too: every connection is waiting on a database that does not answer.
 */
export function isDatabaseUnavailable(err: unknown, depth = 0): boolean {
  if (!err || typeof err !== 'object' || depth > 4) return false
  const e = err as { code?: unknown; name?: unknown; message?: unknown; cause?: unknown; errors?: unknown }
  if (typeof e.code === 'string' && UNAVAILABLE_CODES.has(e.code)) return true
  if (e.name === 'KnexTimeoutError') return true
  if (typeof e.message === 'string' && UNAVAILABLE_MESSAGE.test(e.message)) return true
  if (Array.isArray(e.errors) && e.errors.some((x) => isDatabaseUnavailable(x, depth + 1))) return true
  return isDatabaseUnavailable(e.cause, depth + 1)
}
