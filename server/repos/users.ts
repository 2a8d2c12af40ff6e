import type { Knex } from 'knex'
import type { Role } from '../../shared/utils/roles'

export interface UserRow {
  id: string
  email: string
  display_name: string
  password_hash: string
  role: Role
  active: boolean
  last_login_at: Date | null
  created_at: Date
  updated_at: Date
}

/** Public view of a user (never the hash). */
export interface UserSummary {
  id: number
  email: string
  displayName: string
  role: Role
  active: boolean
  lastLoginAt: string | null
}

export function toSummary(row: UserRow): UserSummary {
  return {
    id: Number(row.id),
    email: row.email,
    displayName: row.display_name,
    role: row.role,
    active: row.active,
    lastLoginAt: row.last_login_at ? row.last_login_at.toISOString() : null,
  }
}

export function normaliseEmail(email: string): string {
  return email.trim().toLowerCase()
}

export async function getUserByEmail(db: Knex, email: string): Promise<UserRow | undefined> {
  return db<UserRow>('users').where({ email: normaliseEmail(email) }).first()
}

export async function getUserById(db: Knex, id: number): Promise<UserRow | undefined> {
  return db<UserRow>('users').where({ id: String(id) }).first()
}

export async function listUsers(db: Knex): Promise<UserSummary[]> {
  const rows = await db<UserRow>('users').orderBy([{ column: 'role' }, { column: 'email' }])
  return rows.map(toSummary)
}

export interface NewUser {
  email: string
  displayName: string
  passwordHash: string
  role: Role
}

/** Inserts a user unless one with that e-mail exists; returns whether it was created. */
export async function createUserIfAbsent(db: Knex, u: NewUser): Promise<boolean> {
  const rows = await db('users')
    .insert({ email: normaliseEmail(u.email), display_name: u.displayName, password_hash: u.passwordHash, role: u.role })
    .onConflict(db.raw('(email)'))
    .ignore()
    .returning('id')
  return rows.length > 0
}

export async function countUsers(db: Knex, filter: { role?: Role; active?: boolean } = {}): Promise<number> {
  const row = await db('users').where(filter).count<{ n: string }[]>({ n: '*' }).first()
  return Number(row?.n ?? 0)
}

export async function recordLogin(db: Knex, id: number): Promise<void> {
  await db('users').where({ id }).update({ last_login_at: db.fn.now() })
}
