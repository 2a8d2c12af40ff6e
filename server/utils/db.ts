import knex, { type Knex } from 'knex'
import { knexConfig } from '../../knexfile'
import { loadConfig } from './config'

let instance: Knex | undefined

/** The server's one Knex instance (connection from DATABASE_URL or the PG* variables). */
export function useDb(): Knex {
  instance ??= knex(knexConfig(loadConfig().databaseUrl))
  return instance
}
