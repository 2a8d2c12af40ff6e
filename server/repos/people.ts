import type { Knex } from 'knex'
import type { Role } from '../../shared/utils/roles'
import type { PersonSummary } from '../../shared/types/api'
import type { PersonView } from '../../shared/types/people'

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
  deactivated_at: Date | null
  deactivated_by: string | null
  /** Sessions signed in before this are refused (set on deactivation). */
  sessions_valid_from: Date | null
}

/** Public view of a user (never the hash). */
export function toSummary(row: UserRow): PersonSummary {
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

/** Everyone who can or could sign in, with who deactivated them; never the hash. */
export async function listPeople(db: Knex): Promise<PersonView[]> {
  const rows: (UserRow & { deactivated_by_name: string | null })[] = await db('users as u')
    .leftJoin('users as d', 'd.id', 'u.deactivated_by')
    .select('u.*', 'd.display_name as deactivated_by_name')
    .orderBy([{ column: 'u.active', order: 'desc' }, { column: 'u.role' }, { column: 'u.email' }])
  return rows.map((r) => ({
    ...toSummary(r),
    createdAt: r.created_at.toISOString(),
    deactivatedAt: r.deactivated_at ? r.deactivated_at.toISOString() : null,
    deactivatedBy: r.deactivated_by_name,
  }))
}

/** Inserts a user and returns its id (the e-mail must be free: unique index). */
export async function createUser(db: Knex, u: NewUser): Promise<number> {
  const [row] = await db('users')
    .insert({ email: normaliseEmail(u.email), display_name: u.displayName, password_hash: u.passwordHash, role: u.role })
    .returning('id')
  return Number(row.id)
}

/**
 * Locks the rows of the active admins until the transaction ends and returns their ids, so two
 * admins demoting each other at once cannot leave nobody in charge.
 */
export async function lockActiveAdmins(trx: Knex.Transaction): Promise<number[]> {
  const rows = await trx('users').where({ role: 'admin', active: true }).orderBy('id').forUpdate().select('id')
  return rows.map((r: { id: string }) => Number(r.id))
}

export async function setRole(db: Knex, id: number, role: Role): Promise<void> {
  await db('users').where({ id }).update({ role, updated_at: db.fn.now() })
}

/**
 * (De)activates an account; deactivation remembers who and when, reactivation clears it.
 * Deactivation also ends every session signed in until now (`sessions_valid_from`): a later
 * reactivation does not revive them.
 */
export async function setActive(db: Knex, id: number, active: boolean, by: number): Promise<void> {
  await db('users')
    .where({ id })
    .update(active ? { active, deactivated_at: null, deactivated_by: null, updated_at: db.fn.now() } : { active, deactivated_at: db.fn.now(), deactivated_by: by, sessions_valid_from: db.fn.now(), updated_at: db.fn.now() })
}

export async function recordLogin(db: Knex, id: number): Promise<void> {
  await db('users').where({ id }).update({ last_login_at: db.fn.now() })
}
