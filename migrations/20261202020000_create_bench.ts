import type { Knex } from 'knex'

/**
 * The test bench: products, lots, units, stations with versioned profiles, recordings, results,
 * and masks (versioned limit sets; a released mask never changes, enforced by a trigger).
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('products', (t) => {
    t.bigIncrements('id')
    t.text('code').notNullable().unique()
    t.text('name').notNullable()
    t.decimal('rated_impedance_ohm', 6, 2).notNullable()
    t.text('nominal_size').notNullable().defaultTo('')
    t.double('sens_band_low_hz').notNullable().defaultTo(300)
    t.double('sens_band_high_hz').notNullable().defaultTo(3000)
    t.timestamps(true, true)
    t.check('sens_band_low_hz > 0 and sens_band_high_hz > sens_band_low_hz', [], 'products_band_check')
    t.check('rated_impedance_ohm > 0', [], 'products_rated_check')
  })

  await knex.schema.createTable('masks', (t) => {
    t.bigIncrements('id')
    t.bigInteger('product_id').notNullable().references('products.id')
    t.integer('version').notNullable()
    t.text('status').notNullable().defaultTo('draft')
    t.text('name').notNullable().defaultTo('')
    t.jsonb('limits').notNullable()
    t.bigInteger('created_by').references('users.id')
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('released_at', { useTz: true })
    t.bigInteger('released_by').references('users.id')
    t.timestamp('retired_at', { useTz: true })
    t.unique(['product_id', 'version'])
    t.check(`status in ('draft', 'released', 'retired')`, [], 'masks_status_check')
  })
  // A released or retired mask keeps its limits forever; only its status may move on (released → retired).
  await knex.raw(`
    CREATE FUNCTION masks_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN
        IF OLD.status <> 'draft' THEN RAISE EXCEPTION 'mask % is %: it cannot be deleted', OLD.id, OLD.status; END IF;
        RETURN OLD;
      END IF;
      IF OLD.status <> 'draft' AND (NEW.limits IS DISTINCT FROM OLD.limits OR NEW.product_id <> OLD.product_id OR NEW.version <> OLD.version) THEN
        RAISE EXCEPTION 'mask % is %: its limits cannot change', OLD.id, OLD.status;
      END IF;
      IF OLD.status = 'retired' AND NEW.status <> 'retired' THEN
        RAISE EXCEPTION 'mask % is retired', OLD.id;
      END IF;
      IF OLD.status = 'released' AND NEW.status = 'draft' THEN
        RAISE EXCEPTION 'mask % is released: it cannot return to draft', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
    CREATE TRIGGER masks_guard BEFORE UPDATE OR DELETE ON masks FOR EACH ROW EXECUTE FUNCTION masks_guard();
  `)
  await knex.schema.alterTable('products', (t) => {
    t.bigInteger('active_mask_id').references('masks.id')
  })

  await knex.schema.createTable('lots', (t) => {
    t.bigIncrements('id')
    t.bigInteger('product_id').notNullable().references('products.id')
    t.text('code').notNullable().unique()
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('closed_at', { useTz: true })
  })

  await knex.schema.createTable('units', (t) => {
    t.bigIncrements('id')
    t.text('serial').notNullable().unique()
    t.bigInteger('product_id').notNullable().references('products.id')
    t.bigInteger('lot_id').references('lots.id')
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.index(['lot_id'])
  })
  await knex.raw('CREATE INDEX units_serial_prefix ON units (serial text_pattern_ops)')

  await knex.schema.createTable('stations', (t) => {
    t.bigIncrements('id')
    t.text('name').notNullable().unique()
    t.text('line').notNullable().defaultTo('')
    t.text('token_hash').notNullable().unique()
    t.text('token_hint').notNullable()
    t.boolean('active').notNullable().defaultTo(true)
    t.timestamps(true, true)
  })

  // Every edit of a profile is a new version; results point at the version they were analysed with.
  await knex.schema.createTable('station_profiles', (t) => {
    t.bigIncrements('id')
    t.bigInteger('station_id').notNullable().references('stations.id')
    t.integer('version').notNullable()
    t.jsonb('profile').notNullable()
    t.bigInteger('created_by').references('users.id')
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.unique(['station_id', 'version'])
  })

  await knex.schema.createTable('recordings', (t) => {
    t.bigIncrements('id')
    t.bigInteger('unit_id').notNullable().references('units.id')
    t.bigInteger('station_id').references('stations.id')
    t.bigInteger('station_profile_id').references('station_profiles.id')
    t.bigInteger('uploaded_by').references('users.id')
    t.timestamp('uploaded_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.text('kind').notNullable()
    t.text('original_name').notNullable()
    t.bigInteger('byte_size').notNullable()
    t.text('sha256').notNullable()
    t.text('storage_key').notNullable()
    t.text('status').notNullable().defaultTo('queued')
    t.text('error_code')
    t.text('error_message')
    t.integer('attempts').notNullable().defaultTo(0)
    t.double('ambient_c')
    t.text('note')
    t.boolean('is_return_test').notNullable().defaultTo(false)
    t.timestamp('finished_at', { useTz: true })
    t.unique(['unit_id', 'sha256'])
    t.index(['station_id', 'uploaded_at'])
    t.index(['status'])
    t.check(`kind in ('sweep', 'impedance_table')`, [], 'recordings_kind_check')
    t.check(`status in ('queued', 'analysing', 'done', 'rejected', 'failed')`, [], 'recordings_status_check')
  })

  await knex.schema.createTable('results', (t) => {
    t.bigIncrements('id')
    t.bigInteger('recording_id').notNullable().unique().references('recordings.id')
    t.bigInteger('unit_id').notNullable().references('units.id')
    t.text('kind').notNullable()
    t.bigInteger('mask_id').references('masks.id')
    t.text('verdict')
    t.jsonb('checks')
    t.timestamp('judged_at', { useTz: true })
    for (const c of ['re_ohm', 're20_ohm', 'ambient_c', 'fs_hz', 'qms', 'qes', 'qts', 'le_mh', 'zmax_ohm', 'zmin_ohm', 'sensitivity_db', 'thd_pct', 'thd_max_pct', 'rub_buzz_db', 'fit_error_pct']) {
      t.double(c)
    }
    t.text('polarity')
    t.boolean('open_coil').notNullable().defaultTo(false)
    t.boolean('shorted_coil').notNullable().defaultTo(false)
    t.jsonb('flags').notNullable()
    t.jsonb('parameters').notNullable()
    t.jsonb('classical')
    // Curves on the standard grid (1/24 octave from 10 Hz): compact float4 arrays, null where not measured.
    t.specificType('curve_freq_hz', 'real[]').notNullable()
    for (const c of ['curve_spl_db', 'curve_spl_phase_deg', 'curve_impedance_ohm', 'curve_impedance_phase_deg', 'curve_thd_pct']) {
      t.specificType(c, 'real[]')
    }
    t.text('engine_version').notNullable()
    t.jsonb('timings_ms').notNullable()
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.index(['unit_id', 'created_at'])
    t.check(`verdict is null or verdict in ('pass', 'fail')`, [], 'results_verdict_check')
  })
  // A verdict is written once: results are history.
  await knex.raw(`
    CREATE FUNCTION results_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'results are history: result % cannot be deleted', OLD.id; END IF;
      IF OLD.verdict IS NOT NULL OR NEW.re_ohm IS DISTINCT FROM OLD.re_ohm OR NEW.fs_hz IS DISTINCT FROM OLD.fs_hz
         OR NEW.parameters IS DISTINCT FROM OLD.parameters OR NEW.recording_id <> OLD.recording_id THEN
        RAISE EXCEPTION 'results are history: result % cannot change', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
    CREATE TRIGGER results_guard BEFORE UPDATE OR DELETE ON results FOR EACH ROW EXECUTE FUNCTION results_guard();
  `)
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('results')
  await knex.raw('DROP FUNCTION IF EXISTS results_guard()')
  await knex.schema.dropTable('recordings')
  await knex.schema.dropTable('station_profiles')
  await knex.schema.dropTable('stations')
  await knex.schema.dropTable('units')
  await knex.schema.dropTable('lots')
  await knex.schema.alterTable('products', (t) => t.dropColumn('active_mask_id'))
  await knex.schema.dropTable('masks')
  await knex.raw('DROP FUNCTION IF EXISTS masks_guard()')
  await knex.schema.dropTable('products')
}
