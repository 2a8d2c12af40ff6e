import type { Knex } from 'knex'

const ROLES = ['technician', 'engineer', 'quality', 'support', 'admin']

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('users', (t) => {
    t.bigIncrements('id')
    t.text('email').notNullable()
    t.text('display_name').notNullable()
    t.text('password_hash').notNullable()
    t.text('role').notNullable()
    t.boolean('active').notNullable().defaultTo(true)
    t.timestamp('last_login_at', { useTz: true })
    t.timestamps(true, true)
    t.check(`role in (${ROLES.map((r) => `'${r}'`).join(', ')})`, [], 'users_role_check')
    t.check('email = lower(email)', [], 'users_email_lowercase')
  })
  await knex.raw('CREATE UNIQUE INDEX users_email_unique ON users (email)')
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('users')
}
