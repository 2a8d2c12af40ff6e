import type { Knex } from 'knex'

/**
 * A product's optional voice-coil description (shared/utils/coil.ts coilSchema, as JSON) and the
 * percentage by which the golden units' mean Re may differ from the coil's expected Re at 20 °C
 * before the mask pages warn (10 % by default: our choice).
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('products', (t) => {
    t.jsonb('coil').nullable()
    t.double('re_warn_pct').notNullable().defaultTo(10)
    t.check('re_warn_pct > 0', [], 'products_re_warn_check')
  })
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('products', (t) => {
    t.dropChecks('products_re_warn_check')
    t.dropColumn('re_warn_pct')
    t.dropColumn('coil')
  })
}
