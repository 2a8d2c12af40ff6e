import type { Knex } from 'knex'
import { createUserIfAbsent } from '../server/repos/people'
import { ROLES, ROLE_LABELS } from '../shared/utils/roles'
import { makePasswordHash } from '../scripts/password'

/** Demo only: one account per role, all with this password (README, "Demo accounts"). */
export const DEMO_PASSWORD = 'conetrail-demo'
export const demoEmail = (role: string) => `${role}@demo.conetrail.test`

export async function seed(knex: Knex): Promise<void> {
  const passwordHash = await makePasswordHash(DEMO_PASSWORD)
  for (const role of ROLES) {
    await createUserIfAbsent(knex, { email: demoEmail(role), displayName: `Demo ${ROLE_LABELS[role]}`, passwordHash, role })
  }
}
