import type { Knex } from 'knex'

/**
 * Likely causes beside each failure class of the lot report's Pareto, editable by engineers, and
 * indexes for the quality pages (lot report, dashboard, serial lookup) at a million results.
 *
 * The seeded causes are trade knowledge (common practice on loudspeaker assembly lines), not a
 * diagnosis: the UI says so. A failure class is a check name, with a direction for two-sided
 * figures (`fsHz:high`).
 */
export const SEEDED_CAUSES: { failureClass: string; label: string; causes: string[] }[] = [
  { failureClass: 'fsHz:high', label: 'Fs high', causes: ['Stiff suspension parts (spider, surround)'] },
  { failureClass: 'fsHz:low', label: 'Fs low', causes: ['Soft suspension', 'Air leak at the dust cap or gasket'] },
  { failureClass: 're20Ohm:high', label: 'Re high', causes: ['Wrong wire', 'Poor lead joint'] },
  { failureClass: 're20Ohm:low', label: 'Re low', causes: ['Wrong (thicker) wire', 'Shorted turns'] },
  { failureClass: 'sensitivityDb:low', label: 'Sensitivity low', causes: ['Magnet not fully charged', 'Wide gap'] },
  { failureClass: 'polarity', label: 'Inverted polarity', causes: ['Leads swapped'] },
  { failureClass: 'rubBuzzDb', label: 'Rub and buzz', causes: ['Coil rubbing', 'Debris in the gap', 'Loose lead wire'] },
  { failureClass: 'thdMaxPct', label: 'High distortion', causes: ['Coil off centre in the gap'] },
  { failureClass: 'coil', label: 'Open or shorted coil', causes: ['Open or shorted coil or lead wire'] },
  { failureClass: 'qts:high', label: 'Qts high', causes: ['Motor strength or suspension losses out of range'] },
  { failureClass: 'qts:low', label: 'Qts low', causes: ['Motor strength or suspension losses out of range'] },
  { failureClass: 'splDb', label: 'Response outside the mask', causes: ['Cone, surround or dust-cap faults'] },
  { failureClass: 'ratedImpedance', label: 'Impedance minimum low', causes: ['Wrong coil (too few turns or thick wire)'] },
]

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('likely_causes', (t) => {
    t.text('failure_class').primary()
    t.text('label').notNullable()
    t.jsonb('causes').notNullable().defaultTo('[]')
    t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now())
    t.bigInteger('updated_by').references('users.id')
  })
  await knex('likely_causes').insert(
    SEEDED_CAUSES.map((c) => ({ failure_class: c.failureClass, label: c.label, causes: JSON.stringify(c.causes) })),
  )
  // Dashboard: the day's recordings; lot lists: lots by product and open state.
  await knex.raw('CREATE INDEX recordings_uploaded_at ON recordings (uploaded_at)')
  await knex.raw('CREATE INDEX lots_product_id ON lots (product_id, created_at DESC)')
  await knex.raw('CREATE INDEX lots_open ON lots (created_at DESC) WHERE closed_at IS NULL')
}

export async function down(knex: Knex): Promise<void> {
  await knex.raw('DROP INDEX IF EXISTS recordings_uploaded_at, lots_product_id, lots_open')
  await knex.schema.dropTable('likely_causes')
}
