import type { Knex } from 'knex'

/**
 * Returns (issue 7): units sent back from the field, their complaint categories (admin-editable),
 * attachments (photos, documents) and the link from a return test recording to its return.
 *
 * History stays append-only: a closed return never changes (trigger), a return is never deleted,
 * attachments are never changed or deleted, a recording's return link is set once at insert, and
 * nothing new attaches to a closed return. Closing needs a disposition (CHECK).
 */
export const SEEDED_RETURN_CATEGORIES: readonly string[] = [
  'No sound',
  'Distorted sound / buzzing',
  'Rattling',
  'Low output',
  'Physical damage',
  'Other',
]

export const DISPOSITIONS = ['no_fault_found', 'confirmed_defect', 'damaged_in_use', 'other'] as const

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('return_categories', (t) => {
    t.bigIncrements('id')
    t.text('label').notNullable()
    t.boolean('active').notNullable().defaultTo(true)
    t.integer('sort_order').notNullable().defaultTo(0)
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.check(`length(btrim(label)) between 1 and 80`, [], 'return_categories_label_check')
  })
  await knex.raw('CREATE UNIQUE INDEX return_categories_label_unique ON return_categories (lower(label))')
  await knex('return_categories').insert(SEEDED_RETURN_CATEGORIES.map((label, i) => ({ label, sort_order: (i + 1) * 10 })))

  await knex.schema.createTable('returns', (t) => {
    t.bigIncrements('id')
    t.bigInteger('unit_id').notNullable().references('units.id')
    t.date('received_on').notNullable()
    t.text('customer_ref').notNullable().defaultTo('')
    // No ON DELETE: a category that a return uses can be deactivated, never deleted.
    t.bigInteger('category_id').notNullable().references('return_categories.id')
    t.text('complaint').notNullable().defaultTo('')
    t.text('status').notNullable().defaultTo('open')
    t.text('disposition')
    /** confirmed_defect: the cause in words, or a failure class of the likely-causes table, or both. */
    t.text('cause')
    t.text('cause_class').references('likely_causes.failure_class')
    /** other: what happened, in words. */
    t.text('disposition_note')
    t.bigInteger('created_by').references('users.id')
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('closed_at', { useTz: true })
    t.bigInteger('closed_by').references('users.id')
    t.index(['unit_id'])
    t.index(['status', 'id'])
    t.check(`status in ('open', 'closed')`, [], 'returns_status_check')
    t.check(`disposition is null or disposition in (${DISPOSITIONS.map((d) => `'${d}'`).join(', ')})`, [], 'returns_disposition_check')
    // Closing needs a disposition; an open return has none yet.
    t.check(
      `(status = 'open' and disposition is null and closed_at is null) or (status = 'closed' and disposition is not null and closed_at is not null)`,
      [],
      'returns_closing_needs_disposition',
    )
    t.check(`disposition is distinct from 'confirmed_defect' or cause_class is not null or length(btrim(coalesce(cause, ''))) > 0`, [], 'returns_defect_needs_cause')
    t.check(`disposition is distinct from 'other' or length(btrim(coalesce(disposition_note, ''))) > 0`, [], 'returns_other_needs_note')
  })
  await knex.raw(`
    CREATE FUNCTION returns_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'returns are history: return % cannot be deleted', OLD.id; END IF;
      IF OLD.status = 'closed' THEN RAISE EXCEPTION 'return % is closed: it cannot change', OLD.id; END IF;
      IF NEW.unit_id <> OLD.unit_id THEN RAISE EXCEPTION 'return %: its unit cannot change', OLD.id; END IF;
      RETURN NEW;
    END $$;
    CREATE TRIGGER returns_guard BEFORE UPDATE OR DELETE ON returns FOR EACH ROW EXECUTE FUNCTION returns_guard();
  `)

  await knex.schema.createTable('return_attachments', (t) => {
    t.bigIncrements('id')
    t.bigInteger('return_id').notNullable().references('returns.id')
    t.text('storage_key').notNullable().unique()
    /** As the uploader's computer named it: shown, never used as a path. */
    t.text('original_name').notNullable()
    t.text('content_type').notNullable()
    t.bigInteger('byte_size').notNullable()
    t.text('sha256').notNullable()
    t.bigInteger('uploaded_by').references('users.id')
    t.timestamp('uploaded_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.index(['return_id', 'id'])
    t.check(`content_type in ('image/png', 'image/jpeg', 'application/pdf')`, [], 'return_attachments_type_check')
    t.check('byte_size > 0', [], 'return_attachments_size_check')
  })

  await knex.schema.alterTable('recordings', (t) => {
    t.bigInteger('return_id').references('returns.id')
    t.index(['return_id'])
    t.check('return_id is null or is_return_test', [], 'recordings_return_link_is_return_test')
  })

  // Nothing new attaches to a closed return; attachments and a recording's return link never change.
  await knex.raw(`
    CREATE FUNCTION return_open_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    DECLARE s text;
    BEGIN
      IF NEW.return_id IS NULL THEN RETURN NEW; END IF;
      SELECT status INTO s FROM returns WHERE id = NEW.return_id;
      IF s = 'closed' THEN RAISE EXCEPTION 'return % is closed: nothing can be added to it', NEW.return_id; END IF;
      RETURN NEW;
    END $$;
    CREATE TRIGGER return_attachments_open BEFORE INSERT ON return_attachments FOR EACH ROW EXECUTE FUNCTION return_open_guard();
    CREATE TRIGGER recordings_return_open BEFORE INSERT ON recordings FOR EACH ROW EXECUTE FUNCTION return_open_guard();

    CREATE FUNCTION return_attachments_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN RAISE EXCEPTION 'return attachments are history: attachment % cannot change', OLD.id; END $$;
    CREATE TRIGGER return_attachments_guard BEFORE UPDATE OR DELETE ON return_attachments FOR EACH ROW EXECUTE FUNCTION return_attachments_guard();

    CREATE FUNCTION recordings_return_link_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF NEW.return_id IS DISTINCT FROM OLD.return_id THEN
        RAISE EXCEPTION 'recording %: its return link is set once, when it is uploaded', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
    CREATE TRIGGER recordings_return_link_guard BEFORE UPDATE ON recordings FOR EACH ROW EXECUTE FUNCTION recordings_return_link_guard();
  `)
}

export async function down(knex: Knex): Promise<void> {
  await knex.raw('DROP TRIGGER IF EXISTS recordings_return_link_guard ON recordings')
  await knex.raw('DROP TRIGGER IF EXISTS recordings_return_open ON recordings')
  await knex.raw('DROP FUNCTION IF EXISTS recordings_return_link_guard()')
  await knex.schema.alterTable('recordings', (t) => {
    t.dropChecks(['recordings_return_link_is_return_test'])
    t.dropIndex(['return_id'])
    t.dropColumn('return_id')
  })
  await knex.schema.dropTable('return_attachments')
  await knex.raw('DROP FUNCTION IF EXISTS return_attachments_guard()')
  await knex.raw('DROP FUNCTION IF EXISTS return_open_guard()')
  await knex.schema.dropTable('returns')
  await knex.raw('DROP FUNCTION IF EXISTS returns_guard()')
  await knex.schema.dropTable('return_categories')
}
