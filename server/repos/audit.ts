import type { Knex } from 'knex'

export interface AuditEntry {
  userId: number | null
  action: string
  entity: string
  entityId: string | number
  comment?: string | null
  detail?: Record<string, unknown>
}

/** Appends one entry to the audit log (the table refuses changes and deletions). */
export async function writeAudit(db: Knex, e: AuditEntry): Promise<void> {
  await db('audit_log').insert({
    user_id: e.userId,
    action: e.action,
    entity: e.entity,
    entity_id: String(e.entityId),
    comment: e.comment ?? null,
    detail: JSON.stringify(e.detail ?? {}),
  })
}
