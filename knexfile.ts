import type { Knex } from 'knex'
import { loadConfig } from './server/utils/config'

/** Knex settings shared by the server, the scripts and the tests. */
export function knexConfig(databaseUrl = loadConfig().databaseUrl): Knex.Config {
  return {
    client: 'pg',
    connection: databaseUrl,
    pool: { min: 0, max: 10 },
    // A failed query's message keeps its SQL with placeholders, never the values (a password hash,
    // a token's hash, what a person typed): that message reaches the server's log.
    compileSqlOnError: false,
    migrations: { directory: './migrations', extension: 'ts', loadExtensions: ['.ts'], tableName: 'knex_migrations' },
    seeds: { directory: './seeds', extension: 'ts', loadExtensions: ['.ts'] },
  }
}

export default knexConfig()
