import type { Knex } from 'knex'

/**
 * Sessions signed in before `sessions_valid_from` are refused (requireRole answers 401 and clears
 * the cookie). Deactivation sets it to now(), so reactivating a person never brings back the
 * sessions they had open before: they sign in again. Null: every session of the person counts.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('users', (t) => {
    t.timestamp('sessions_valid_from', { useTz: true })
  })
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('users', (t) => {
    t.dropColumn('sessions_valid_from')
  })
}
