import type { Knex } from 'knex'

/**
 * A third verdict, `retest`: the recording could not decide (a disturbance, a station fault, a
 * figure whose uncertainty straddles its limit), with the reason why (shared/utils/verdict.ts
 * RETEST_REASONS, spelled out here so this migration never changes with that list). A reason is
 * stored exactly when the verdict is `retest`, and it is written once, with the verdict.
 * Per product, `retest_limit`: after this many retests in a row a unit needs review (default 2:
 * our choice; at most 10, beyond which a station fault would go unnoticed for too long).
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('ALTER TABLE results DROP CONSTRAINT results_verdict_check')
  await knex.schema.alterTable('results', (t) => {
    t.text('retest_reason')
    t.check(`verdict is null or verdict in ('pass', 'fail', 'retest')`, [], 'results_verdict_check')
    t.check(`retest_reason is null or retest_reason in ('probe_fault', 'level', 'transient', 'hum', 'noise', 'undecided')`, [], 'results_retest_reason_check')
    t.check(`(verdict is not distinct from 'retest') = (retest_reason is not null)`, [], 'results_retest_reason_with_verdict')
  })
  // The guard of 20261202040000, with retest_reason among what the first verdict may set.
  await knex.raw(`
    CREATE OR REPLACE FUNCTION results_guard() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
      IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'results are history: result % cannot be deleted', OLD.id; END IF;
      IF OLD.verdict IS NOT NULL OR NEW.verdict IS NULL
         OR (to_jsonb(NEW) - ARRAY['verdict', 'mask_id', 'checks', 'judged_at', 'retest_reason'])
            IS DISTINCT FROM (to_jsonb(OLD) - ARRAY['verdict', 'mask_id', 'checks', 'judged_at', 'retest_reason']) THEN
        RAISE EXCEPTION 'results are history: result % cannot change', OLD.id;
      END IF;
      RETURN NEW;
    END $$;
  `)
  await knex.schema.alterTable('products', (t) => {
    t.integer('retest_limit').notNullable().defaultTo(2)
    t.check('retest_limit between 1 and 10', [], 'products_retest_limit_check')
  })
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('products', (t) => {
    t.dropChecks('products_retest_limit_check')
    t.dropColumn('retest_limit')
  })
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
  await knex.schema.alterTable('results', (t) => {
    t.dropChecks(['results_retest_reason_with_verdict', 'results_retest_reason_check', 'results_verdict_check'])
    t.dropColumn('retest_reason')
    t.check(`verdict is null or verdict in ('pass', 'fail')`, [], 'results_verdict_check')
  })
}
