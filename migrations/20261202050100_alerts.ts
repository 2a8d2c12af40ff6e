import type { Knex } from 'knex'

/**
 * Alert rules (issue 6, "E-mail"): per-product settings, the people mailed when an alert opens, and
 * the alerts themselves. One open alert per (product, lot, kind) is a partial unique index, so
 * "once per episode" holds however many workers evaluate at the same time: an alert is an
 * episode; it closes when the condition clears and a later one is a new row.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('alert_settings', (t) => {
    t.bigInteger('product_id').primary().references('products.id').onDelete('CASCADE')
    t.integer('last_n').notNullable().defaultTo(50)
    t.double('min_yield_pct').notNullable().defaultTo(90)
    t.boolean('enabled').notNullable().defaultTo(true)
    t.bigInteger('updated_by').references('users.id')
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.check('last_n between 1 and 10000', [], 'alert_settings_last_n_check')
    t.check('min_yield_pct between 0 and 100', [], 'alert_settings_min_yield_check')
  })
  await knex.schema.createTable('product_subscribers', (t) => {
    t.bigInteger('product_id').notNullable().references('products.id').onDelete('CASCADE')
    t.text('email').notNullable()
    t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.primary(['product_id', 'email'])
  })
  await knex.schema.createTable('alerts', (t) => {
    t.bigIncrements('id')
    t.bigInteger('product_id').notNullable().references('products.id')
    t.bigInteger('lot_id').references('lots.id')
    t.text('kind').notNullable()
    /** 1 for the first episode of this (product, lot, kind), 2 for the next… */
    t.integer('episode').notNullable()
    t.text('message').notNullable()
    t.jsonb('details').notNullable().defaultTo('{}')
    t.timestamp('opened_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.timestamp('closed_at', { useTz: true })
    t.timestamp('mailed_at', { useTz: true })
    t.check(`kind in ('low_yield', 'drift')`, [], 'alerts_kind_check')
    t.check('closed_at is null or closed_at >= opened_at', [], 'alerts_closed_after_opened')
  })
  // lot_id may be null (a product-wide alert): coalesce so NULLs collide too.
  await knex.raw('CREATE UNIQUE INDEX alerts_one_open ON alerts (product_id, coalesce(lot_id, 0), kind) WHERE closed_at IS NULL')
  await knex.raw('CREATE UNIQUE INDEX alerts_episode ON alerts (product_id, coalesce(lot_id, 0), kind, episode)')
  await knex.raw('CREATE INDEX alerts_open ON alerts (opened_at DESC) WHERE closed_at IS NULL')
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('alerts')
  await knex.schema.dropTable('product_subscribers')
  await knex.schema.dropTable('alert_settings')
}
