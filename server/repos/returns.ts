import type { Knex } from 'knex'
import type {
  Disposition,
  ReturnAttachmentView,
  ReturnCategoryView,
  ReturnRate,
  ReturnStatus,
  ReturnSummary,
  ReturnTestView,
  ReturnView,
} from '../../shared/types/returns.ts'

// ---- Categories ----

/** Complaint categories in their order; inactive ones only when asked (admins edit them). */
export async function listReturnCategories(db: Knex, opts: { includeInactive?: boolean } = {}): Promise<ReturnCategoryView[]> {
  const q = db('return_categories as c')
    .select('c.id', 'c.label', 'c.active', 'c.sort_order', db.raw('(SELECT count(*) FROM returns r WHERE r.category_id = c.id) AS used'))
    .orderBy([{ column: 'c.sort_order' }, { column: 'c.id' }])
  if (!opts.includeInactive) q.where('c.active', true)
  return (await q).map((r: { id: string; label: string; active: boolean; sort_order: number; used: string }) => ({
    id: Number(r.id),
    label: r.label,
    active: r.active,
    sortOrder: r.sort_order,
    used: Number(r.used),
  }))
}

export async function getReturnCategory(db: Knex, id: number): Promise<ReturnCategoryView | undefined> {
  return (await listReturnCategories(db, { includeInactive: true })).find((c) => c.id === id)
}

/** @throws the unique violation of `return_categories_label_unique` for a label already used (any case). */
export async function createReturnCategory(db: Knex, c: { label: string; sortOrder?: number }): Promise<number> {
  const sortOrder = c.sortOrder ?? Number((await db('return_categories').max('sort_order as m').first())?.m ?? 0) + 10
  const [row] = await db('return_categories').insert({ label: c.label, sort_order: sortOrder }).returning('id')
  return Number(row.id)
}

/** Renames, reorders or (de)activates a category; never deletes one. Returns false for an unknown id. */
export async function updateReturnCategory(db: Knex, id: number, change: { label?: string; active?: boolean; sortOrder?: number }): Promise<boolean> {
  const n = await db('return_categories')
    .where({ id })
    .update({
      ...(change.label !== undefined ? { label: change.label } : {}),
      ...(change.active !== undefined ? { active: change.active } : {}),
      ...(change.sortOrder !== undefined ? { sort_order: change.sortOrder } : {}),
    })
  return n > 0
}

// ---- Returns ----

export interface ReturnRow {
  id: number
  unitId: number
  serial: string
  status: ReturnStatus
}

interface SummaryRow {
  id: string
  unit_id: string
  serial: string
  product_code: string
  lot_code: string | null
  received_on: string
  customer_ref: string
  category_id: string
  category: string
  status: ReturnStatus
  disposition: Disposition | null
  created_at: Date
  closed_at: Date | null
}

function summaryQuery(db: Knex) {
  return db('returns as r')
    .join('units as u', 'u.id', 'r.unit_id')
    .join('products as p', 'p.id', 'u.product_id')
    .leftJoin('lots as l', 'l.id', 'u.lot_id')
    .join('return_categories as c', 'c.id', 'r.category_id')
    .select(
      'r.id', 'r.unit_id', 'u.serial', 'p.code as product_code', 'l.code as lot_code',
      db.raw(`to_char(r.received_on, 'YYYY-MM-DD') as received_on`),
      'r.customer_ref', 'r.category_id', 'c.label as category', 'r.status', 'r.disposition', 'r.created_at', 'r.closed_at',
    )
}

function toSummary(r: SummaryRow): ReturnSummary {
  return {
    id: Number(r.id),
    serial: r.serial,
    productCode: r.product_code,
    lotCode: r.lot_code,
    receivedOn: r.received_on,
    customerRef: r.customer_ref,
    category: r.category,
    status: r.status,
    disposition: r.disposition,
    createdAt: r.created_at.toISOString(),
    closedAt: r.closed_at ? r.closed_at.toISOString() : null,
  }
}

/** Returns, newest first, optionally only open or closed ones, or those of serials starting with a prefix. */
export async function listReturns(db: Knex, filter: { status: ReturnStatus | 'all'; serial?: string; limit: number }): Promise<ReturnSummary[]> {
  const q = summaryQuery(db).orderBy('r.id', 'desc').limit(filter.limit)
  if (filter.status !== 'all') q.where('r.status', filter.status)
  if (filter.serial) q.whereLike('u.serial', `${filter.serial.replace(/[\\%_]/g, (c) => `\\${c}`)}%`)
  return ((await q) as SummaryRow[]).map(toSummary)
}

/** The bare row (for guards in services); `forUpdate` locks it until the transaction ends. */
export async function getReturnRow(db: Knex, id: number, opts: { forUpdate?: boolean } = {}): Promise<ReturnRow | undefined> {
  const q = db('returns as r').join('units as u', 'u.id', 'r.unit_id').where('r.id', id).first('r.id', 'r.unit_id', 'u.serial', 'r.status')
  if (opts.forUpdate) q.forUpdate('r')
  const r = await q
  return r && { id: Number(r.id), unitId: Number(r.unit_id), serial: r.serial, status: r.status }
}

/** One return with its attachments and return tests, as GET /api/returns/:id answers. */
export async function getReturnView(db: Knex, id: number): Promise<ReturnView | undefined> {
  const r = await summaryQuery(db)
    .leftJoin('users as cu', 'cu.id', 'r.created_by')
    .leftJoin('users as xu', 'xu.id', 'r.closed_by')
    .where('r.id', id)
    .first('r.complaint', 'r.cause', 'r.cause_class', 'r.disposition_note', 'cu.display_name as created_by_name', 'xu.display_name as closed_by_name')
  if (!r) return undefined
  const [attachments, returnTests] = await Promise.all([listReturnAttachments(db, id), listReturnTests(db, id)])
  return {
    ...toSummary(r as SummaryRow),
    categoryId: Number(r.category_id),
    complaint: r.complaint,
    cause: r.cause,
    causeClass: r.cause_class,
    dispositionNote: r.disposition_note,
    createdBy: r.created_by_name,
    closedBy: r.closed_by_name,
    attachments,
    returnTests,
  }
}

export interface NewReturn {
  unitId: number
  receivedOn: string
  customerRef: string
  categoryId: number
  complaint: string
  createdBy: number | null
}

export async function insertReturn(db: Knex, r: NewReturn): Promise<number> {
  const [row] = await db('returns')
    .insert({ unit_id: r.unitId, received_on: r.receivedOn, customer_ref: r.customerRef, category_id: r.categoryId, complaint: r.complaint, created_by: r.createdBy })
    .returning('id')
  return Number(row.id)
}

/** Edits an open return (the database refuses to change a closed one). */
export async function updateReturn(db: Knex, id: number, change: { receivedOn?: string; customerRef?: string; categoryId?: number; complaint?: string }): Promise<void> {
  await db('returns')
    .where({ id })
    .update({
      ...(change.receivedOn !== undefined ? { received_on: change.receivedOn } : {}),
      ...(change.customerRef !== undefined ? { customer_ref: change.customerRef } : {}),
      ...(change.categoryId !== undefined ? { category_id: change.categoryId } : {}),
      ...(change.complaint !== undefined ? { complaint: change.complaint } : {}),
      updated_at: db.fn.now(),
    })
}

export interface ReturnClosing {
  disposition: Disposition
  cause: string | null
  causeClass: string | null
  note: string | null
  closedBy: number | null
}

/** Closes an open return with its disposition; false when it was not open. */
export async function closeReturnRow(db: Knex, id: number, c: ReturnClosing): Promise<boolean> {
  const n = await db('returns')
    .where({ id, status: 'open' })
    .update({
      status: 'closed',
      disposition: c.disposition,
      cause: c.cause,
      cause_class: c.causeClass,
      disposition_note: c.note,
      closed_at: db.fn.now(),
      closed_by: c.closedBy,
      updated_at: db.fn.now(),
    })
  return n > 0
}

export async function causeClassExists(db: Knex, failureClass: string): Promise<boolean> {
  return !!(await db('likely_causes').where({ failure_class: failureClass }).first('failure_class'))
}

// ---- Attachments ----

export interface NewAttachment {
  returnId: number
  storageKey: string
  originalName: string
  contentType: ReturnAttachmentView['contentType']
  byteSize: number
  sha256: string
  uploadedBy: number | null
}

export async function insertReturnAttachment(db: Knex, a: NewAttachment): Promise<number> {
  const [row] = await db('return_attachments')
    .insert({
      return_id: a.returnId,
      storage_key: a.storageKey,
      original_name: a.originalName,
      content_type: a.contentType,
      byte_size: a.byteSize,
      sha256: a.sha256,
      uploaded_by: a.uploadedBy,
    })
    .returning('id')
  return Number(row.id)
}

interface AttachmentRow {
  id: string
  original_name: string
  content_type: ReturnAttachmentView['contentType']
  byte_size: string
  uploaded_at: Date
  uploaded_by_name: string | null
  storage_key: string
}

const toAttachment = (a: AttachmentRow): ReturnAttachmentView => ({
  id: Number(a.id),
  originalName: a.original_name,
  contentType: a.content_type,
  byteSize: Number(a.byte_size),
  uploadedAt: a.uploaded_at.toISOString(),
  uploadedBy: a.uploaded_by_name,
})

function attachmentQuery(db: Knex) {
  return db('return_attachments as a')
    .leftJoin('users as u', 'u.id', 'a.uploaded_by')
    .select('a.id', 'a.original_name', 'a.content_type', 'a.byte_size', 'a.uploaded_at', 'a.storage_key', 'u.display_name as uploaded_by_name')
}

export async function listReturnAttachments(db: Knex, returnId: number): Promise<ReturnAttachmentView[]> {
  return ((await attachmentQuery(db).where('a.return_id', returnId).orderBy('a.id')) as AttachmentRow[]).map(toAttachment)
}

/** One attachment of one return, with its storage key (undefined when it is not that return's). */
export async function getReturnAttachment(db: Knex, returnId: number, attachmentId: number): Promise<(ReturnAttachmentView & { storageKey: string }) | undefined> {
  const a = (await attachmentQuery(db).where({ 'a.return_id': returnId, 'a.id': attachmentId }).first()) as AttachmentRow | undefined
  return a && { ...toAttachment(a), storageKey: a.storage_key }
}

// ---- Return tests and the factory test ----

export async function listReturnTests(db: Knex, returnId: number): Promise<ReturnTestView[]> {
  const rows = await db('recordings as r')
    .leftJoin('results as res', 'res.recording_id', 'r.id')
    .where('r.return_id', returnId)
    .orderBy('r.id', 'desc')
    .select('r.id', 'r.status', 'res.verdict', 'r.uploaded_at', 'r.original_name', 'r.error_code', 'r.error_message')
  return rows.map((r) => ({
    recordingId: Number(r.id),
    status: r.status,
    verdict: r.verdict ?? null,
    uploadedAt: (r.uploaded_at as Date).toISOString(),
    originalName: r.original_name,
    error: r.error_code ? { code: r.error_code, message: r.error_message ?? '' } : null,
  }))
}

/** The unit's latest production recording (never a return test) that has a result. */
export async function latestFactoryRecordingId(db: Knex, unitId: number): Promise<number | null> {
  const r = await db('recordings as r')
    .join('results as res', 'res.recording_id', 'r.id')
    .where({ 'r.unit_id': unitId, 'r.is_return_test': false })
    .orderBy([{ column: 'r.uploaded_at', order: 'desc' }, { column: 'r.id', order: 'desc' }])
    .first('r.id')
  return r ? Number(r.id) : null
}

/** The return's latest return test that has a result. */
export async function latestReturnTestRecordingId(db: Knex, returnId: number): Promise<number | null> {
  const r = await db('recordings as r')
    .join('results as res', 'res.recording_id', 'r.id')
    .where('r.return_id', returnId)
    .orderBy([{ column: 'r.uploaded_at', order: 'desc' }, { column: 'r.id', order: 'desc' }])
    .first('r.id')
  return r ? Number(r.id) : null
}

// ---- Return rates (quality pages) ----

/** Returns of a lot's units: count, distinct units (the rate divides by the lot's units tested). */
export async function countLotReturns(db: Knex, lotId: number): Promise<{ returns: number; returnedUnits: number }> {
  const r = await db('returns as r')
    .join('units as u', 'u.id', 'r.unit_id')
    .where('u.lot_id', lotId)
    .first(db.raw('count(*) as returns'), db.raw('count(DISTINCT r.unit_id) as returned_units'))
  return { returns: Number(r?.returns ?? 0), returnedUnits: Number(r?.returned_units ?? 0) }
}

/** Returns registered per unit of a lot, by serial (units never returned are absent). */
export async function countReturnsPerUnit(db: Knex, lotId: number): Promise<Map<string, number>> {
  const rows: { serial: string; returns: string }[] = await db('returns as r')
    .join('units as u', 'u.id', 'r.unit_id')
    .where('u.lot_id', lotId)
    .groupBy('u.serial')
    .select('u.serial', db.raw('count(*) as returns'))
  return new Map(rows.map((r) => [r.serial, Number(r.returns)]))
}

/**
 * Per product with at least one return: its units (every unit is registered by its first test),
 * returns and returned units.
 */
export async function listProductReturnRates(db: Knex): Promise<({ productCode: string; unitsTested: number } & ReturnRate)[]> {
  const { rows } = await db.raw(`
    WITH rr AS (
      SELECT u.product_id, count(*) AS returns, count(DISTINCT r.unit_id) AS returned_units
        FROM returns r JOIN units u ON u.id = r.unit_id
       GROUP BY u.product_id
    )
    SELECT p.code AS product_code,
           (SELECT count(*) FROM units u WHERE u.product_id = p.id) AS units,
           coalesce(rr.returns, 0) AS returns,
           coalesce(rr.returned_units, 0) AS returned_units
      FROM products p JOIN rr ON rr.product_id = p.id
     ORDER BY p.code`)
  return rows
    .map((r: { product_code: string; units: string; returns: string; returned_units: string }) => {
      const units = Number(r.units)
      const returnedUnits = Number(r.returned_units)
      return { productCode: r.product_code, unitsTested: units, returns: Number(r.returns), returnedUnits, returnRate: units === 0 ? null : returnedUnits / units }
    })
    .filter((r: { unitsTested: number }) => r.unitsTested > 0)
}
