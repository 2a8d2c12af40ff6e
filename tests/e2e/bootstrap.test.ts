import { Hash } from '@adonisjs/hash'
import { Scrypt } from '@adonisjs/hash/drivers/scrypt'
import knex from 'knex'
import { register } from 'tsx/esm/api'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { ensureDatabase } from '../../scripts/db'
import { bootstrapAdmin, migrateLatest, seedDemoIfEmpty } from '../../scripts/migrate'
import { loadConfig, withDatabase } from '../../server/utils/config'

// A database of its own on the test cluster: a real installation's first start.
const url = withDatabase(inject('databaseUrl'), 'conetrail_first_run')
const env = { DATABASE_URL: url, CONETRAIL_ADMIN_EMAIL: 'Plant.Admin@example.test', CONETRAIL_ADMIN_PASSWORD: 'a long first password', CONETRAIL_DEMO: '0' }
let unregister: () => Promise<void>

beforeAll(async () => {
  unregister = register()
  await ensureDatabase(withDatabase(url, 'postgres'), 'conetrail_first_run', { fresh: true })
  await migrateLatest(loadConfig(env))
}, 60_000)

afterAll(async () => {
  await unregister?.()
})

describe('first run of a real installation', () => {
  it('creates the admin from CONETRAIL_ADMIN_EMAIL/PASSWORD once, and no demo data with CONETRAIL_DEMO=0', async () => {
    const cfg = loadConfig(env)
    expect(cfg.demo).toBe(false)
    expect(await bootstrapAdmin(cfg)).toBe(true)
    expect(await bootstrapAdmin(cfg)).toBe(false)
    const db = knex({ client: 'pg', connection: url })
    try {
      const users = await db('users').select('email', 'role', 'password_hash')
      expect(users.map((u) => [u.email, u.role])).toEqual([['plant.admin@example.test', 'admin']])
      // The same hasher as nuxt-auth-utils' verifyPassword (scrypt, default options).
      expect(await new Hash(new Scrypt({})).verify(users[0].password_hash, 'a long first password')).toBe(true)
      // The demo seed runs only on an empty database: with an admin present it does nothing.
      expect(await seedDemoIfEmpty(cfg)).toBe(false)
      expect(await db('products').count<{ c: string }[]>({ c: '*' })).toEqual([{ c: '0' }])
    } finally {
      await db.destroy()
    }
  })
})
