import type { Knex } from 'knex'

/**
 * Finding a unit (issue 7): serials are searched without regard to case, by prefix (what was typed
 * so far) and by suffix (the last digits, and the nearest matches of a mistyped serial: a single
 * wrong character leaves either its prefix or its suffix intact). text_pattern_ops lets LIKE 'x%'
 * use the index whatever the database's collation. No extension is needed.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('CREATE INDEX units_serial_lower_prefix ON units (lower(serial) text_pattern_ops)')
  await knex.raw('CREATE INDEX units_serial_lower_suffix ON units (reverse(lower(serial)) text_pattern_ops)')
  // A unit's tests newest first (unit page, search hits): the unique (unit_id, sha256) index cannot order them.
  await knex.raw('CREATE INDEX recordings_unit_id_id ON recordings (unit_id, id DESC)')
}

export async function down(knex: Knex): Promise<void> {
  await knex.raw('DROP INDEX units_serial_lower_prefix, units_serial_lower_suffix, recordings_unit_id_id')
}
