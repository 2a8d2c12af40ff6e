import type { Knex } from 'knex'

/**
 * Statistical mask proposals. Per product: the floors of its limits (a minimum half-width per figure
 * and curve; empty: the defaults of shared/utils/mask.ts) and the false-reject share, in %, above
 * which a release asks twice (default 1 %). Per mask: how each proposed limit was set (rule, n, k,
 * the golden and production spreads, warnings), written once when the draft is proposed; a
 * released mask keeps it unchanged like every other column (masks_guard).
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('products', (t) => {
    t.jsonb('limit_floors').notNullable().defaultTo('{}')
    t.double('false_reject_max_pct').notNullable().defaultTo(1)
    t.check('false_reject_max_pct > 0 and false_reject_max_pct <= 50', [], 'products_false_reject_max_pct_range')
  })
  await knex.schema.alterTable('masks', (t) => {
    t.jsonb('proposal')
  })
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('masks', (t) => t.dropColumn('proposal'))
  await knex.schema.alterTable('products', (t) => {
    t.dropChecks('products_false_reject_max_pct_range')
    t.dropColumn('false_reject_max_pct')
    t.dropColumn('limit_floors')
  })
}
