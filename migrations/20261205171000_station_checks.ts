import type { Knex } from 'knex'

/**
 * Station checks. A station's check plan says when it must be checked with a reference unit: at the
 * start of each shift (local shift start times in the plan's time zone), every N hours and/or every
 * N production units; a station without a plan is never blocked. Each station-check recording, once
 * analysed, gives one check row (each figure against its verification limit). An engineer's release
 * of a blocked station holds until a stated time. Checks and releases are history: never changed,
 * never deleted.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('station_check_plans', (t) => {
    t.bigInteger('station_id').primary().references('stations.id')
    t.jsonb('shift_starts').notNullable().defaultTo('[]')
    t.text('time_zone').notNullable().defaultTo('UTC')
    t.double('every_hours')
    t.integer('every_units')
    t.bigInteger('updated_by').references('users.id')
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.check('every_hours is null or every_hours > 0', [], 'station_check_plans_hours')
    t.check('every_units is null or every_units > 0', [], 'station_check_plans_units')
  })
  await knex.schema.createTable('station_checks', (t) => {
    t.bigIncrements('id')
    t.bigInteger('station_id').notNullable().references('stations.id')
    t.bigInteger('reference_unit_id').notNullable().references('reference_units.id')
    t.bigInteger('recording_id').notNullable().unique().references('recordings.id')
    t.boolean('pass').notNullable()
    t.jsonb('figures').notNullable()
    t.timestamp('checked_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.index(['station_id', 'checked_at'])
  })
  await knex.schema.createTable('station_releases', (t) => {
    t.bigIncrements('id')
    t.bigInteger('station_id').notNullable().references('stations.id')
    t.bigInteger('released_by').references('users.id')
    t.text('comment').notNullable()
    t.timestamp('at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('until', { useTz: true }).notNullable()
    t.check('until > at', [], 'station_releases_until')
    t.index(['station_id', 'at'])
  })
  await knex.raw(`
    CREATE FUNCTION station_history_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN RAISE EXCEPTION '% is history: rows cannot change or be deleted', TG_TABLE_NAME; END $$;
    CREATE TRIGGER station_checks_guard BEFORE UPDATE OR DELETE ON station_checks FOR EACH ROW EXECUTE FUNCTION station_history_guard();
    CREATE TRIGGER station_releases_guard BEFORE UPDATE OR DELETE ON station_releases FOR EACH ROW EXECUTE FUNCTION station_history_guard();
  `)
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('station_releases')
  await knex.schema.dropTable('station_checks')
  await knex.raw('DROP FUNCTION IF EXISTS station_history_guard()')
  await knex.schema.dropTable('station_check_plans')
}
