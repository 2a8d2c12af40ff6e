import type { Knex } from 'knex'

const ROLES = ['technician', 'engineer', 'quality', 'support', 'admin']

/**
 * People and their trace: one-time invitations (only the SHA-256 of the link's token is kept),
 * who deactivated an account and when, audit log columns for the address and a readable subject
 * with indexes for the audit page's filters, and the table of the sign-in rate limiter.
 * People are never deleted: the database refuses it, so their names stay on history.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('invitations', (t) => {
    t.bigIncrements('id')
    t.text('token_hash').notNullable().unique()
    t.text('email').notNullable()
    t.text('role').notNullable()
    t.bigInteger('invited_by').notNullable().references('users.id')
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('expires_at', { useTz: true }).notNullable()
    t.timestamp('used_at', { useTz: true })
    t.bigInteger('user_id').references('users.id')
    t.timestamp('revoked_at', { useTz: true })
    t.bigInteger('revoked_by').references('users.id')
    t.check(`role in (${ROLES.map((r) => `'${r}'`).join(', ')})`, [], 'invitations_role_check')
    t.check('email = lower(email)', [], 'invitations_email_lowercase')
    t.check('(used_at IS NULL) = (user_id IS NULL)', [], 'invitations_used_with_user')
    t.index(['email'])
    t.index(['created_at'])
  })
  // One use only: once used or revoked, an invitation never changes again.
  await knex.raw(`
    CREATE FUNCTION invitations_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'invitations are kept: invitation % cannot be deleted', OLD.id; END IF;
      IF OLD.used_at IS NOT NULL OR OLD.revoked_at IS NOT NULL THEN
        RAISE EXCEPTION 'invitation % is closed: it cannot change', OLD.id;
      END IF;
      IF NEW.token_hash <> OLD.token_hash OR NEW.email <> OLD.email OR NEW.role <> OLD.role
         OR NEW.invited_by <> OLD.invited_by OR NEW.expires_at <> OLD.expires_at OR NEW.created_at <> OLD.created_at THEN
        RAISE EXCEPTION 'invitation % can only be used or revoked', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
    CREATE TRIGGER invitations_guard BEFORE UPDATE OR DELETE ON invitations FOR EACH ROW EXECUTE FUNCTION invitations_guard();
  `)

  await knex.schema.alterTable('users', (t) => {
    t.timestamp('deactivated_at', { useTz: true })
    t.bigInteger('deactivated_by').references('users.id')
  })
  await knex.raw(`
    CREATE FUNCTION users_keep_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN RAISE EXCEPTION 'people are never deleted (deactivate instead): user % stays on history', OLD.id; END $$;
    CREATE TRIGGER users_keep_guard BEFORE DELETE ON users FOR EACH ROW EXECUTE FUNCTION users_keep_guard();
  `)

  await knex.schema.alterTable('audit_log', (t) => {
    t.text('ip')
    t.text('subject')
  })
  await knex.raw('CREATE INDEX audit_log_user_at ON audit_log (user_id, at DESC)')
  await knex.raw('CREATE INDEX audit_log_action_at ON audit_log (action, at DESC)')

  // rate-limiter-flexible's PostgreSQL store (its own layout), shared by every web server.
  await knex.raw(`CREATE TABLE sign_in_limits (key varchar(255) PRIMARY KEY, points integer NOT NULL DEFAULT 0, expire bigint)`)
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('sign_in_limits')
  await knex.raw('DROP INDEX audit_log_user_at, audit_log_action_at')
  // Dropping a column fires no row trigger: the append-only guard stays in place.
  await knex.schema.alterTable('audit_log', (t) => {
    t.dropColumn('ip')
    t.dropColumn('subject')
  })
  await knex.raw('DROP TRIGGER users_keep_guard ON users; DROP FUNCTION users_keep_guard()')
  await knex.schema.alterTable('users', (t) => {
    t.dropColumn('deactivated_at')
    t.dropColumn('deactivated_by')
  })
  await knex.schema.dropTable('invitations')
  await knex.raw('DROP FUNCTION invitations_guard()')
}
