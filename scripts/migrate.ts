/**
 * Migrations, the demo seed and the first-run admin.
 *   node --import tsx scripts/migrate.ts      migrate to the latest schema
 */
import { resolve } from 'node:path'
import { fileURLToPath } from 'node:url'
import knex, { type Knex } from 'knex'
import { knexConfig } from '../knexfile'
import { loadConfig, type ConetrailConfig } from '../server/utils/config'
import { countUsers, createUserIfAbsent } from '../server/repos/people'
import { makePasswordHash } from './password'

const projectRoot = resolve(fileURLToPath(import.meta.url), '../..')

function connect(cfg: ConetrailConfig): Knex {
  const c = knexConfig(cfg.databaseUrl)
  return knex({
    ...c,
    migrations: { ...c.migrations, directory: resolve(projectRoot, 'migrations') },
    seeds: { ...c.seeds, directory: resolve(projectRoot, 'seeds') },
  })
}

async function withDb<T>(cfg: ConetrailConfig, fn: (db: Knex) => Promise<T>): Promise<T> {
  const db = connect(cfg)
  try {
    return await fn(db)
  } finally {
    await db.destroy()
  }
}

export function migrateLatest(cfg: ConetrailConfig): Promise<string[]> {
  return withDb(cfg, async (db) => {
    const [, applied] = (await db.migrate.latest()) as [number, string[]]
    return applied
  })
}

/** Runs the demo seed only on an empty database, so a start never touches real data. */
export function seedDemoIfEmpty(cfg: ConetrailConfig): Promise<boolean> {
  return withDb(cfg, async (db) => {
    if ((await countUsers(db)) > 0) return false
    await db.seed.run()
    return true
  })
}

/** Runs every seed, or only the named ones (idempotent: existing rows are left as they are). */
export function runSeeds(cfg: ConetrailConfig, only?: string[]): Promise<void> {
  return withDb(cfg, async (db) => {
    if (only) for (const specific of only) await db.seed.run({ specific })
    else await db.seed.run()
  })
}

/** With CONETRAIL_ADMIN_EMAIL/PASSWORD set and no admin yet, creates that admin. */
export function bootstrapAdmin(cfg: ConetrailConfig): Promise<boolean> {
  const admin = cfg.bootstrapAdmin
  if (!admin) return Promise.resolve(false)
  return withDb(cfg, async (db) => {
    if ((await countUsers(db, { role: 'admin' })) > 0) return false
    return createUserIfAbsent(db, {
      email: admin.email,
      displayName: 'Administrator',
      passwordHash: await makePasswordHash(admin.password),
      role: 'admin',
    })
  })
}

if (resolve(process.argv[1] ?? '') === fileURLToPath(import.meta.url)) {
  migrateLatest(loadConfig())
    .then((applied) => console.log(applied.length ? `[migrate] applied ${applied.join(', ')}` : '[migrate] already up to date'))
    .catch((err: unknown) => {
      console.error(`[migrate] ${err instanceof Error ? err.message : String(err)}`)
      process.exit(1)
    })
}
