import { createHash } from 'node:crypto'
import { open, rm } from 'node:fs/promises'
import type { Knex } from 'knex'
import type PgBoss from 'pg-boss'
import type { StationProfile } from '../analysis/index.ts'
import { recordAudit } from './audit.ts'
import { isUniqueViolation } from '../repos/pg-errors.ts'
import {
  causeClassExists,
  closeReturnRow,
  createReturnCategory,
  getReturnAttachment,
  getReturnCategory,
  getReturnRow,
  getReturnView,
  insertReturn,
  insertReturnAttachment,
  updateReturn,
  updateReturnCategory,
} from '../repos/returns.ts'
import { findUnitIdsBySerialIgnoringCase } from '../repos/units.ts'
import { newAttachmentKey, sniffAttachmentType, type AttachmentStorage } from '../storage/attachments.ts'
import type { RecordingStorage } from '../storage/recordings.ts'
import type { ReturnAttachmentView, ReturnCategoryView, ReturnView } from '../../shared/types/returns.ts'
import { RETURN_DISPOSITION_LABELS, receivedOnProblem, type ReturnCloseInput, type ReturnCreateInput, type ReturnPatchInput } from '../../shared/utils/returns.ts'
import { acceptUpload, type UploadOutcome } from './ingest.ts'
import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'

export const RETURN_ERROR_CODES = [
  'received_in_future',
  'received_too_early',
  'ambiguous_serial',
  'unknown_category',
  'unknown_serial',
  'unknown_return',
  'return_closed',
  'disposition_required',
  'cause_required',
  'note_required',
  'unknown_cause_class',
  'empty_file',
  'unsupported_attachment',
  'unknown_attachment',
  'label_required',
  'category_exists',
  'category_not_found',
] as const satisfies readonly ErrorCode[]

/** A refusal of the returns desk. */
export class ReturnError extends DomainError<(typeof RETURN_ERROR_CODES)[number]> {}

const closedError = (id: number) => new ReturnError('return_closed', `Return ${id} is closed: it cannot change`)
const unknownReturn = (id: number) => new ReturnError('unknown_return', `No return ${id}`)

/** The audit subject of a return: its id and the unit's serial, so that filtering by serial finds it. */
const auditSubject = (id: number, serial: string) => `return ${id} of ${serial}`

/** @throws ReturnError `received_in_future` or `received_too_early`. */
function requirePlausibleReceivedOn(date: string): void {
  const problem = receivedOnProblem(date)
  if (problem) throw new ReturnError(problem.code, problem.message)
}

/**
 * The unit a serial (already normalised like the search box's, shared/utils/units.ts) names: the one
 * spelled so, else the only one spelled the same but for case.
 */
async function unitForSerial(db: Knex, serial: string): Promise<{ id: number; serial: string } | undefined> {
  const same = await findUnitIdsBySerialIgnoringCase(db, serial)
  if (same[0]?.serial === serial || same.length === 1) return same[0]
  if (same.length > 1) throw new ReturnError('ambiguous_serial', `Several units are spelled ${serial} but for upper and lower case: type the serial exactly as on the label`)
  return undefined
}

async function requireActiveCategory(db: Knex, id: number): Promise<void> {
  const c = await getReturnCategory(db, id)
  if (!c || !c.active) throw new ReturnError('unknown_category', `No active complaint category ${id}`)
}

/**
 * Registers a return of a known unit (the serial's case ignored, as in the search box) and writes
 * the audit log, in one transaction.
 * @throws ReturnError `received_in_future`, `received_too_early`; `unknown_serial` (never
 *   tested here), `ambiguous_serial`, `unknown_category`.
 */
export async function registerReturn(db: Knex, input: ReturnCreateInput, by: number | null): Promise<ReturnView> {
  requirePlausibleReceivedOn(input.receivedOn)
  const unit = await unitForSerial(db, input.serial)
  if (!unit) throw new ReturnError('unknown_serial', `Unit ${input.serial} has never been tested here: check the serial on the label`)
  const id = await db.transaction(async (trx) => {
    await requireActiveCategory(trx, input.categoryId)
    const newId = await insertReturn(trx, {
      unitId: unit.id,
      receivedOn: input.receivedOn,
      customerRef: input.customerRef,
      categoryId: input.categoryId,
      complaint: input.complaint,
      createdBy: by,
    })
    const category = (await getReturnCategory(trx, input.categoryId))!.label
    await recordAudit(trx, {
      userId: by,
      action: 'return.register',
      entity: 'return',
      entityId: newId,
      subject: auditSubject(newId, unit.serial),
      detail: { serial: unit.serial, received: input.receivedOn, category, customerReference: input.customerRef || null },
    })
    return newId
  })
  return (await getReturnView(db, id))!
}

export async function getReturn(db: Knex, id: number): Promise<ReturnView> {
  const r = await getReturnView(db, id)
  if (!r) throw unknownReturn(id)
  return r
}

/**
 * Edits an open return.
 * @throws ReturnError `unknown_return`, `return_closed`, `unknown_category`.
 */
export async function editReturn(db: Knex, id: number, change: ReturnPatchInput, by: number | null = null): Promise<ReturnView> {
  if (change.receivedOn !== undefined) requirePlausibleReceivedOn(change.receivedOn)
  await db.transaction(async (trx) => {
    const r = await getReturnRow(trx, id, { forUpdate: true })
    if (!r) throw unknownReturn(id)
    if (r.status !== 'open') throw closedError(id)
    if (change.categoryId !== undefined) await requireActiveCategory(trx, change.categoryId)
    await updateReturn(trx, id, change)
    const detail: Record<string, unknown> = { serial: r.serial }
    if (change.receivedOn !== undefined) detail.received = change.receivedOn
    if (change.customerRef !== undefined) detail.customerReference = change.customerRef
    if (change.categoryId !== undefined) detail.category = (await getReturnCategory(trx, change.categoryId))!.label
    if (change.complaint !== undefined) detail.complaint = change.complaint
    await recordAudit(trx, { userId: by, action: 'return.edit', entity: 'return', entityId: id, subject: auditSubject(id, r.serial), detail })
  })
  return getReturn(db, id)
}

/**
 * Closes a return with its disposition and writes the audit log, in one transaction.
 * @throws ReturnError `disposition_required`, `cause_required`, `note_required`, `unknown_cause_class`;
 *   404 `unknown_return`; 409 `return_closed`.
 */
export async function closeReturn(db: Knex, id: number, input: ReturnCloseInput, by: number | null): Promise<ReturnView> {
  const { disposition } = input
  if (!disposition) throw new ReturnError('disposition_required', 'Closing a return needs a disposition: no fault found, confirmed defect, damaged in use or other')
  const cause = disposition === 'confirmed_defect' ? input.cause || null : null
  const causeClass = disposition === 'confirmed_defect' ? input.causeClass ?? null : null
  const note = input.note || null
  if (disposition === 'confirmed_defect' && !cause && !causeClass) {
    throw new ReturnError('cause_required', 'A confirmed defect needs its cause (in words, or one of the likely causes)')
  }
  if (disposition === 'other' && !note) throw new ReturnError('note_required', 'Say what happened when the disposition is "other"')
  await db.transaction(async (trx) => {
    const r = await getReturnRow(trx, id, { forUpdate: true })
    if (!r) throw unknownReturn(id)
    if (r.status !== 'open') throw closedError(id)
    if (causeClass && !(await causeClassExists(trx, causeClass))) throw new ReturnError('unknown_cause_class', `No likely-cause class ${causeClass}`)
    await closeReturnRow(trx, id, { disposition, cause, causeClass, note, closedBy: by })
    await recordAudit(trx, {
      userId: by,
      action: 'return.close',
      entity: 'return',
      entityId: id,
      subject: auditSubject(id, r.serial),
      comment: note,
      detail: { serial: r.serial, disposition: RETURN_DISPOSITION_LABELS[disposition], cause, causeClass },
    })
  })
  return getReturn(db, id)
}

/** How many bytes of an attachment are read to tell its type. */
const SNIFF_BYTES = 16

async function readHead(path: string): Promise<Buffer> {
  const fh = await open(path, 'r')
  try {
    const buf = Buffer.alloc(SNIFF_BYTES)
    const { bytesRead } = await fh.read(buf, 0, SNIFF_BYTES, 0)
    return buf.subarray(0, bytesRead)
  } finally {
    await fh.close()
  }
}

async function sha256Of(path: string): Promise<string> {
  const hash = createHash('sha256')
  const fh = await open(path, 'r')
  try {
    for await (const chunk of fh.createReadStream()) hash.update(chunk as Buffer)
  } finally {
    await fh.close()
  }
  return hash.digest('hex')
}

/**
 * Adds a photo or document to an open return. The type comes from the bytes (PNG, JPEG or PDF);
 * the original name is kept for display only, the stored key is built from a random id and the hash.
 * @throws ReturnError `empty_file`, `unsupported_attachment`, `unknown_return`, `return_closed`.
 */
export async function addReturnAttachment(
  db: Knex,
  storage: AttachmentStorage,
  id: number,
  file: { path: string; originalName: string; size: number },
  by: number | null,
): Promise<ReturnAttachmentView> {
  if (file.size === 0) throw new ReturnError('empty_file', 'The file is empty')
  const type = sniffAttachmentType(await readHead(file.path))
  if (!type) throw new ReturnError('unsupported_attachment', 'Attach a photo (PNG or JPEG) or a PDF document; the file\'s contents are none of these')
  const sha256 = await sha256Of(file.path)
  const key = newAttachmentKey(sha256, type)
  let stored = false
  try {
    const attachmentId = await db.transaction(async (trx) => {
      const r = await getReturnRow(trx, id, { forUpdate: true })
      if (!r) throw unknownReturn(id)
      if (r.status !== 'open') throw closedError(id)
      const newId = await insertReturnAttachment(trx, {
        returnId: id,
        storageKey: key,
        originalName: file.originalName.slice(0, 255),
        contentType: type,
        byteSize: file.size,
        sha256,
        uploadedBy: by,
      })
      await storage.putFile(key, file.path)
      stored = true
      await recordAudit(trx, {
        userId: by,
        action: 'return.attach',
        entity: 'return',
        entityId: id,
        subject: auditSubject(id, r.serial),
        detail: { serial: r.serial, file: file.originalName.slice(0, 255), type: type, size: file.size },
      })
      return newId
    })
    const { storageKey: _key, ...view } = (await getReturnAttachment(db, id, attachmentId))!
    return view
  } catch (err) {
    if (stored) await storage.remove(key)
    throw err
  } finally {
    await rm(file.path, { force: true })
  }
}

/** An attachment's bytes and how to name it in a download. @throws ReturnError `unknown_attachment`. */
export async function readReturnAttachment(db: Knex, storage: AttachmentStorage, id: number, attachmentId: number): Promise<{ view: ReturnAttachmentView; bytes: Buffer }> {
  const a = await getReturnAttachment(db, id, attachmentId)
  if (!a) throw new ReturnError('unknown_attachment', `Return ${id} has no attachment ${attachmentId}`)
  const { storageKey, ...view } = a
  return { view, bytes: await storage.read(storageKey) }
}

export interface RetestSource {
  tempPath: string
  originalName: string
  fields: { serial?: string; ambientC?: number; note?: string }
  station: { id: number; profileId: number; profile: StationProfile } | null
  userId: number | null
}

/**
 * Uploads a return test of the return's unit through the production pipeline (acceptUpload): same
 * validation, storage and queue, marked as a return test and linked to the return in the same
 * transaction. A serial other than the return's unit is refused (422 `wrong_unit`).
 */
export async function retestReturn(db: Knex, storage: RecordingStorage, boss: PgBoss, id: number, src: RetestSource): Promise<UploadOutcome> {
  const r = await getReturnRow(db, id)
  if (!r) {
    await rm(src.tempPath, { force: true })
    throw unknownReturn(id)
  }
  const outcome = await acceptUpload(db, storage, boss, {
    tempPath: src.tempPath,
    originalName: src.originalName,
    fields: { serial: src.fields.serial || r.serial, ambientC: src.fields.ambientC, note: src.fields.note },
    station: src.station,
    userId: src.userId,
    returnId: id,
  })
  if (!outcome.duplicate) {
    await recordAudit(db, {
      userId: src.userId,
      action: 'return.retest',
      entity: 'return',
      entityId: id,
      subject: auditSubject(id, r.serial),
      detail: { serial: r.serial, recording: outcome.id, file: src.originalName.slice(0, 255), station: src.station?.id ?? null },
    })
  }
  return outcome
}

// ---- Categories (admins) ----

const labelRequired = () => new ReturnError('label_required', 'Give the complaint category a name')

/** @throws ReturnError `label_required`, `category_exists` for a label already used. */
export async function addReturnCategory(db: Knex, c: { label: string; sortOrder?: number }, by: number | null = null): Promise<ReturnCategoryView> {
  if (!c.label) throw labelRequired()
  try {
    const id = await db.transaction(async (trx) => {
      const newId = await createReturnCategory(trx, c)
      await recordAudit(trx, { userId: by, action: 'return-category.add', entity: 'return_category', entityId: newId, subject: `complaint category "${c.label}"`, detail: { label: c.label } })
      return newId
    })
    return (await getReturnCategory(db, id))!
  } catch (err) {
    if (isUniqueViolation(err)) throw new ReturnError('category_exists', `A category "${c.label}" exists already`)
    throw err
  }
}

/** @throws ReturnError `label_required`, `category_not_found`, `category_exists`. */
export async function editReturnCategory(db: Knex, id: number, change: { label?: string; active?: boolean; sortOrder?: number }, by: number | null = null): Promise<ReturnCategoryView> {
  if (change.label === '') throw labelRequired()
  try {
    await db.transaction(async (trx) => {
      const before = await getReturnCategory(trx, id)
      if (!before || !(await updateReturnCategory(trx, id, change))) throw new ReturnError('category_not_found', `No complaint category ${id}`)
      const detail: Record<string, unknown> = {}
      if (change.label !== undefined && change.label !== before.label) detail.renamedFrom = before.label
      if (change.active !== undefined) detail.switched = change.active ? 'on' : 'off'
      if (change.sortOrder !== undefined) detail.position = change.sortOrder
      const label = change.label ?? before.label
      await recordAudit(trx, { userId: by, action: 'return-category.change', entity: 'return_category', entityId: id, subject: `complaint category "${label}"`, detail: { label, ...detail } })
    })
  } catch (err) {
    if (isUniqueViolation(err)) throw new ReturnError('category_exists', `A category "${change.label}" exists already`)
    throw err
  }
  return (await getReturnCategory(db, id))!
}
