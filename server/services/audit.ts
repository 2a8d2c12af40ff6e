/**
 * The one way an audited action is recorded. Every audit row is written here, by the service that
 * does the action, in the same transaction as the change when there is one: reading this file's
 * callers lists every audited action and its home. Routes, repos and the mail module never write
 * audit rows (tests/unit/audit-in-services.test.ts).
 */
import type { Knex } from 'knex'
import { insertAuditEntry, type AuditEntry } from '../repos/audit'

export type { AuditEntry }

/** Appends one entry to the audit log. Never put a password or a token in `detail`. */
export async function recordAudit(db: Knex, e: AuditEntry): Promise<void> {
  await insertAuditEntry(db, e)
}
