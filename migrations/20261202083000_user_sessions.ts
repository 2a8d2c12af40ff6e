import type { Knex } from 'knex'

/**
 * The server's record of each sign-in session. The session cookie is sealed and carries its id;
 * a request is served only while that id names a row here that has not ended and has not passed
 * its end (one shift after sign-in). Sign-out ends the row, so a copied cookie is refused from
 * then on; deactivation ends every row of the person. Expired rows are removed at sign-ins.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('user_sessions', (t) => {
    t.uuid('id').primary()
    t.bigInteger('user_id').notNullable().references('users.id')
    t.timestamp('started_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('expires_at', { useTz: true }).notNullable()
    t.timestamp('ended_at', { useTz: true })
    t.text('ended_reason')
    t.check("ended_reason in ('sign_out', 'signed_in_again', 'deactivated')", [], 'user_sessions_reason_check')
    t.check('(ended_at IS NULL) = (ended_reason IS NULL)', [], 'user_sessions_ended_with_reason')
    t.index(['user_id'])
    t.index(['expires_at'])
  })
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('user_sessions')
}
