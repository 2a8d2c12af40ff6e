import type { Knex } from 'knex'

/**
 * Indexes for the bench's station list, the cross-unit duplicate check and per-product history;
 * stricter guards: an unjudged result may receive its first verdict and nothing else, and a
 * released mask keeps who created and released it.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('CREATE INDEX recordings_station_id_id ON recordings (station_id, id DESC)')
  await knex.raw('CREATE INDEX recordings_sha256 ON recordings (sha256)')
  await knex.raw('CREATE INDEX units_product_id ON units (product_id, id)')
  await knex.raw('CREATE INDEX results_unit_id_id ON results (unit_id, id DESC)')
  await knex.raw(`
    CREATE OR REPLACE FUNCTION results_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'results are history: result % cannot be deleted', OLD.id; END IF;
      IF OLD.verdict IS NOT NULL OR NEW.verdict IS NULL
         OR (to_jsonb(NEW) - ARRAY['verdict', 'mask_id', 'checks', 'judged_at']) IS DISTINCT FROM (to_jsonb(OLD) - ARRAY['verdict', 'mask_id', 'checks', 'judged_at']) THEN
        RAISE EXCEPTION 'results are history: result % cannot change', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
  `)
  await knex.raw(`
    CREATE OR REPLACE FUNCTION masks_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN
        IF OLD.status <> 'draft' THEN RAISE EXCEPTION 'mask % is %: it cannot be deleted', OLD.id, OLD.status; END IF;
        RETURN OLD;
      END IF;
      -- Once released, only the move to retired (with who, when and why) may change a mask.
      IF OLD.status <> 'draft' AND (to_jsonb(NEW) - ARRAY['status', 'retired_at', 'retired_by', 'retire_comment'])
                                   IS DISTINCT FROM (to_jsonb(OLD) - ARRAY['status', 'retired_at', 'retired_by', 'retire_comment']) THEN
        RAISE EXCEPTION 'mask % is %: it cannot change', OLD.id, OLD.status;
      END IF;
      IF OLD.status = 'retired' AND to_jsonb(NEW) IS DISTINCT FROM to_jsonb(OLD) THEN
        RAISE EXCEPTION 'mask % is retired', OLD.id;
      END IF;
      IF OLD.status = 'released' AND NEW.status = 'draft' THEN
        RAISE EXCEPTION 'mask % is released: it cannot return to draft', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
  `)
}

export async function down(knex: Knex): Promise<void> {
  await knex.raw('DROP INDEX recordings_station_id_id, recordings_sha256, units_product_id, results_unit_id_id')
}
