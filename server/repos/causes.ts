import type { Knex } from 'knex'
import type { LikelyCause } from '../../shared/types/reports.ts'

interface CauseRow {
  failure_class: string
  label: string
  causes: string[]
  updated_at: Date
  updated_by_name: string | null
}

function toCause(r: CauseRow): LikelyCause {
  return { failureClass: r.failure_class, label: r.label, causes: r.causes, updatedAt: r.updated_at.toISOString(), updatedBy: r.updated_by_name }
}

function causesQuery(db: Knex) {
  return db('likely_causes as c').leftJoin('users as u', 'u.id', 'c.updated_by').select('c.*', 'u.display_name as updated_by_name')
}

/** Every failure class with its likely causes (trade knowledge, editable by engineers), by class. */
export async function listCauses(db: Knex): Promise<LikelyCause[]> {
  return ((await causesQuery(db).orderBy('c.failure_class')) as CauseRow[]).map(toCause)
}

export async function getCause(db: Knex, failureClass: string): Promise<LikelyCause | undefined> {
  const r = (await causesQuery(db).where('c.failure_class', failureClass).first()) as CauseRow | undefined
  return r && toCause(r)
}

/**
 * Sets the causes of a failure class (creating the class when new: its label defaults to the
 * class name), recording who and when.
 */
export async function putCause(db: Knex, failureClass: string, change: { label?: string; causes: string[] }, by: number | null): Promise<LikelyCause> {
  await db('likely_causes')
    .insert({ failure_class: failureClass, label: change.label ?? failureClass, causes: JSON.stringify(change.causes), updated_at: db.fn.now(), updated_by: by })
    .onConflict('failure_class')
    .merge({ ...(change.label !== undefined ? { label: change.label } : {}), causes: JSON.stringify(change.causes), updated_at: db.fn.now(), updated_by: by })
  return (await getCause(db, failureClass))!
}
