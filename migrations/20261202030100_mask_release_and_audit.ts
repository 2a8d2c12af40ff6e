import type { Knex } from 'knex'

/**
 * Masks remember their golden units, their proposal options and why they were released; an audit
 * log records who did what and why. A released or retired mask now also keeps its name.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('masks', (t) => {
    t.jsonb('options').notNullable().defaultTo('{}')
    t.text('release_comment')
    t.bigInteger('retired_by').references('users.id')
    t.text('retire_comment')
  })
  await knex.schema.createTable('mask_golden', (t) => {
    t.bigInteger('mask_id').notNullable().references('masks.id')
    t.bigInteger('unit_id').notNullable().references('units.id')
    t.bigInteger('recording_id').notNullable().references('recordings.id')
    t.text('serial').notNullable()
    t.primary(['mask_id', 'unit_id'])
  })
  await knex.schema.createTable('audit_log', (t) => {
    t.bigIncrements('id')
    t.timestamp('at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.bigInteger('user_id').references('users.id')
    t.text('action').notNullable()
    t.text('entity').notNullable()
    t.text('entity_id').notNullable()
    t.text('comment')
    t.jsonb('detail').notNullable().defaultTo('{}')
    t.index(['entity', 'entity_id'])
    t.index(['at'])
  })
  // The audit log is append-only.
  await knex.raw(`
    CREATE FUNCTION audit_log_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN RAISE EXCEPTION 'the audit log is append-only'; END $$;
    CREATE TRIGGER audit_log_guard BEFORE UPDATE OR DELETE ON audit_log FOR EACH ROW EXECUTE FUNCTION audit_log_guard();
  `)
  // Stricter mask guard: once released, nothing but the move to retired may change.
  await knex.raw(`
    CREATE OR REPLACE FUNCTION masks_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN
        IF OLD.status <> 'draft' THEN RAISE EXCEPTION 'mask % is %: it cannot be deleted', OLD.id, OLD.status; END IF;
        RETURN OLD;
      END IF;
      IF OLD.status <> 'draft' AND (NEW.limits IS DISTINCT FROM OLD.limits OR NEW.product_id <> OLD.product_id
          OR NEW.version <> OLD.version OR NEW.name IS DISTINCT FROM OLD.name OR NEW.options IS DISTINCT FROM OLD.options
          OR NEW.released_at IS DISTINCT FROM OLD.released_at OR NEW.release_comment IS DISTINCT FROM OLD.release_comment) THEN
        RAISE EXCEPTION 'mask % is %: it cannot change', OLD.id, OLD.status;
      END IF;
      IF OLD.status = 'retired' AND (NEW.status <> 'retired' OR NEW.retired_at IS DISTINCT FROM OLD.retired_at) THEN
        RAISE EXCEPTION 'mask % is retired', OLD.id;
      END IF;
      IF OLD.status = 'released' AND NEW.status = 'draft' THEN
        RAISE EXCEPTION 'mask % is released: it cannot return to draft', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
  `)
  await knex.raw(`
    CREATE FUNCTION mask_golden_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    DECLARE s text;
    BEGIN
      SELECT status INTO s FROM masks WHERE id = COALESCE(NEW.mask_id, OLD.mask_id);
      IF s <> 'draft' THEN RAISE EXCEPTION 'the golden units of a % mask cannot change', s; END IF;
      RETURN COALESCE(NEW, OLD);
    END $$;
    CREATE TRIGGER mask_golden_guard BEFORE INSERT OR UPDATE OR DELETE ON mask_golden FOR EACH ROW EXECUTE FUNCTION mask_golden_guard();
  `)
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('mask_golden')
  await knex.raw('DROP FUNCTION IF EXISTS mask_golden_guard()')
  await knex.schema.dropTable('audit_log')
  await knex.raw('DROP FUNCTION IF EXISTS audit_log_guard()')
  await knex.schema.alterTable('masks', (t) => {
    t.dropColumn('options')
    t.dropColumn('release_comment')
    t.dropColumn('retired_by')
    t.dropColumn('retire_comment')
  })
}
