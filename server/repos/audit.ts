import type { Knex } from 'knex'
import type { AuditEntryView, AuditPage } from '../../shared/types/people'
import type { AuditQuery } from '../../shared/utils/audit'

export interface AuditEntry {
  userId: number | null
  action: string
  entity: string
  entityId: string | number
  comment?: string | null
  detail?: Record<string, unknown>
  /** The caller's address, when an HTTP request caused the entry. */
  ip?: string | null
  /** A readable name of what was acted on (defaults to `<entity> <entityId>`). */
  subject?: string | null
}

/**
 * Appends one entry to the audit log (the table refuses changes and deletions). Services call it
 * through `recordAudit` (server/services/audit.ts), the one place audit rows are written from.
 */
export async function insertAuditEntry(db: Knex, e: AuditEntry): Promise<void> {
  await db('audit_log').insert({
    user_id: e.userId,
    action: e.action,
    entity: e.entity,
    entity_id: String(e.entityId),
    comment: e.comment ?? null,
    detail: JSON.stringify(e.detail ?? {}),
    ip: e.ip ?? null,
    subject: e.subject ?? `${e.entity} ${e.entityId}`,
  })
}

/** `%text%` for ILIKE with the user's own % and _ taken literally. */
function contains(text: string): string {
  return `%${text.replace(/[\\%_]/g, (c) => `\\${c}`)}%`
}

interface AuditJoinRow {
  id: string
  at: Date
  user_id: string | null
  display_name: string | null
  email: string | null
  action: string
  entity: string
  entity_id: string
  subject: string | null
  comment: string | null
  detail: Record<string, unknown>
  ip: string | null
}

/** One page of the audit log, newest first, filtered by time, actor, action and subject. */
export async function listAudit(db: Knex, q: AuditQuery): Promise<AuditPage> {
  const base = db('audit_log as a').leftJoin('users as u', 'u.id', 'a.user_id')
  if (q.from) base.where('a.at', '>=', q.from)
  if (q.to) base.where('a.at', '<', q.to)
  if (q.action) base.where('a.action', q.action)
  if (q.actor) base.where((w) => w.whereILike('u.email', contains(q.actor!)).orWhereILike('u.display_name', contains(q.actor!)))
  if (q.subject) {
    const s = contains(q.subject)
    base.where((w) => w.whereILike('a.subject', s).orWhereILike('a.entity_id', s).orWhereILike('a.comment', s))
  }
  const counted = await base.clone().count<{ n: string }[]>({ n: '*' }).first()
  const rows: AuditJoinRow[] = await base
    .select('a.id', 'a.at', 'a.user_id', 'u.display_name', 'u.email', 'a.action', 'a.entity', 'a.entity_id', 'a.subject', 'a.comment', 'a.detail', 'a.ip')
    .orderBy([{ column: 'a.at', order: 'desc' }, { column: 'a.id', order: 'desc' }])
    .limit(q.pageSize)
    .offset((q.page - 1) * q.pageSize)
  const actions = (await db('audit_log').distinct('action').orderBy('action')).map((r: { action: string }) => r.action)
  return { entries: rows.map(toView), total: Number(counted?.n ?? 0), page: q.page, pageSize: q.pageSize, actions }
}

function toView(r: AuditJoinRow): AuditEntryView {
  return {
    id: Number(r.id),
    at: r.at.toISOString(),
    actor: r.user_id ? { id: Number(r.user_id), displayName: r.display_name ?? '', email: r.email ?? '' } : null,
    action: r.action,
    entity: r.entity,
    entityId: r.entity_id,
    subject: r.subject ?? `${r.entity} ${r.entity_id}`,
    comment: r.comment,
    detail: r.detail,
    ip: r.ip,
  }
}
