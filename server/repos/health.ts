import type { Knex } from 'knex'

/** The cheapest round trip to the database: resolves when it answers a query. */
export async function pingDatabase(db: Knex): Promise<void> {
  await db.raw('select 1')
}
