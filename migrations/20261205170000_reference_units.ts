import type { Knex } from 'knex'

/**
 * Reference units: a known unit of a product kept to check the stations with. Its accepted values
 * (the mean of several measurements on a trusted station, with their spread) and its verification
 * limits are written once; a change is a new registration after the old one is retired
 * (reference_units_guard), so every past check keeps the values it was judged against.
 *
 * Every recording now says what it was made for: a production test, a return test, or a station
 * check (a reference unit measured again). Only production tests count in yield, lots and Cpk.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('recordings', (t) => {
    t.text('purpose').notNullable().defaultTo('production')
  })
  await knex.raw(`UPDATE recordings SET purpose = 'return_test' WHERE is_return_test`)
  await knex.schema.alterTable('recordings', (t) => {
    t.check(`purpose in ('production', 'return_test', 'station_check')`, [], 'recordings_purpose_check')
    t.check(`is_return_test = (purpose = 'return_test')`, [], 'recordings_purpose_return_test')
  })

  await knex.schema.createTable('reference_units', (t) => {
    t.bigIncrements('id')
    t.bigInteger('unit_id').notNullable().references('units.id')
    t.bigInteger('product_id').notNullable().references('products.id')
    t.text('description').notNullable()
    t.text('kept_at').notNullable()
    /** The trusted station the accepted values were measured on. */
    t.bigInteger('station_id').references('stations.id')
    /** { figure: { value, sd, n } } from the recordings listed in basis_recording_ids. */
    t.jsonb('accepted').notNullable()
    /** { figure: { low, high, rule } }: the verification limits around the accepted values. */
    t.jsonb('limits').notNullable()
    t.specificType('basis_recording_ids', 'bigint[]').notNullable()
    t.bigInteger('created_by').references('users.id')
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('retired_at', { useTz: true })
    t.bigInteger('retired_by').references('users.id')
    t.text('retire_comment')
    t.index(['product_id'])
  })
  // One registration in force per unit.
  await knex.raw('CREATE UNIQUE INDEX reference_units_one_active ON reference_units (unit_id) WHERE retired_at IS NULL')
  await knex.raw(`
    CREATE FUNCTION reference_units_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'reference unit % is history: it cannot be deleted', OLD.id; END IF;
      IF OLD.retired_at IS NOT NULL
         OR NEW.unit_id <> OLD.unit_id OR NEW.product_id <> OLD.product_id OR NEW.accepted IS DISTINCT FROM OLD.accepted
         OR NEW.limits IS DISTINCT FROM OLD.limits OR NEW.basis_recording_ids IS DISTINCT FROM OLD.basis_recording_ids
         OR NEW.created_at <> OLD.created_at OR NEW.station_id IS DISTINCT FROM OLD.station_id THEN
        RAISE EXCEPTION 'reference unit % cannot change: retire it and register it anew', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
    CREATE TRIGGER reference_units_guard BEFORE UPDATE OR DELETE ON reference_units FOR EACH ROW EXECUTE FUNCTION reference_units_guard();
  `)
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('reference_units')
  await knex.raw('DROP FUNCTION IF EXISTS reference_units_guard()')
  await knex.schema.alterTable('recordings', (t) => {
    t.dropChecks(['recordings_purpose_check', 'recordings_purpose_return_test'])
    t.dropColumn('purpose')
  })
}
