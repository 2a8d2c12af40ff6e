import type { Knex } from 'knex'
import { loadConfig } from './server/utils/config'

/** Knex settings shared by the server, the scripts and the tests. */
export function knexConfig(databaseUrl = loadConfig().databaseUrl): Knex.Config {
  return {
    client: 'pg',
    connection: databaseUrl,
    pool: { min: 0, max: 10 },
    migrations: { directory: './migrations', extension: 'ts', loadExtensions: ['.ts'], tableName: 'knex_migrations' },
    seeds: { directory: './seeds', extension: 'ts', loadExtensions: ['.ts'] },
  }
}

export default knexConfig()
