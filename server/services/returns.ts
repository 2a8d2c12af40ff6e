import { createHash } from 'node:crypto'
import { open, rm } from 'node:fs/promises'
import type { Knex } from 'knex'
import type PgBoss from 'pg-boss'
import type { StationProfile } from '../analysis/index.ts'
import { writeAudit } from '../repos/audit.ts'
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
import { getUnitBySerial } from '../repos/units.ts'
import { newAttachmentKey, sniffAttachmentType, type AttachmentStorage } from '../storage/attachments.ts'
import type { RecordingStorage } from '../storage/recordings.ts'
import type { ReturnAttachmentView, ReturnCategoryView, ReturnView } from '../../shared/types/returns.ts'
import type { ReturnCloseInput, ReturnCreateInput, ReturnPatchInput } from '../../shared/utils/returns.ts'
import { acceptUpload, UploadRefused, type UploadOutcome } from './ingest.ts'

/**
 * A refusal of the returns desk, with the HTTP status and code to answer. It extends UploadRefused
 * so that the one error mapper (server/utils/errors.ts, toHttpError) answers it the same way.
 */
export class ReturnError extends UploadRefused {}

const closedError = (id: number) => new ReturnError(409, 'return_closed', `Return ${id} is closed: it cannot change`)
const unknownReturn = (id: number) => new ReturnError(404, 'unknown_return', `No return ${id}`)

async function requireActiveCategory(db: Knex, id: number): Promise<void> {
  const c = await getReturnCategory(db, id)
  if (!c || !c.active) throw new ReturnError(422, 'unknown_category', `No active complaint category ${id}`)
}

/**
 * Registers a return of a known unit.
 * @throws ReturnError 422 `unknown_serial` (never tested here), `unknown_category`.
 */
export async function registerReturn(db: Knex, input: ReturnCreateInput, by: number | null): Promise<ReturnView> {
  const unit = await getUnitBySerial(db, input.serial)
  if (!unit) throw new ReturnError(422, 'unknown_serial', `Unit ${input.serial} has never been tested here: check the serial on the label`)
  await requireActiveCategory(db, input.categoryId)
  const id = await insertReturn(db, {
    unitId: Number(unit.id),
    receivedOn: input.receivedOn,
    customerRef: input.customerRef,
    categoryId: input.categoryId,
    complaint: input.complaint,
    createdBy: by,
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
 * @throws ReturnError 404 `unknown_return`, 409 `return_closed`, 422 `unknown_category`.
 */
export async function editReturn(db: Knex, id: number, change: ReturnPatchInput): Promise<ReturnView> {
  await db.transaction(async (trx) => {
    const r = await getReturnRow(trx, id, { forUpdate: true })
    if (!r) throw unknownReturn(id)
    if (r.status !== 'open') throw closedError(id)
    if (change.categoryId !== undefined) await requireActiveCategory(trx, change.categoryId)
    await updateReturn(trx, id, change)
  })
  return getReturn(db, id)
}

/**
 * Closes a return with its disposition and writes the audit log, in one transaction.
 * @throws ReturnError 422 `disposition_required`, `cause_required`, `note_required`, `unknown_cause_class`;
 *   404 `unknown_return`; 409 `return_closed`.
 */
export async function closeReturn(db: Knex, id: number, input: ReturnCloseInput, by: number | null): Promise<ReturnView> {
  const { disposition } = input
  if (!disposition) throw new ReturnError(422, 'disposition_required', 'Closing a return needs a disposition: no fault found, confirmed defect, damaged in use or other')
  const cause = disposition === 'confirmed_defect' ? input.cause || null : null
  const causeClass = disposition === 'confirmed_defect' ? input.causeClass ?? null : null
  const note = input.note || null
  if (disposition === 'confirmed_defect' && !cause && !causeClass) {
    throw new ReturnError(422, 'cause_required', 'A confirmed defect needs its cause (in words, or one of the likely causes)')
  }
  if (disposition === 'other' && !note) throw new ReturnError(422, 'note_required', 'Say what happened when the disposition is "other"')
  await db.transaction(async (trx) => {
    const r = await getReturnRow(trx, id, { forUpdate: true })
    if (!r) throw unknownReturn(id)
    if (r.status !== 'open') throw closedError(id)
    if (causeClass && !(await causeClassExists(trx, causeClass))) throw new ReturnError(422, 'unknown_cause_class', `No likely-cause class ${causeClass}`)
    await closeReturnRow(trx, id, { disposition, cause, causeClass, note, closedBy: by })
    await writeAudit(trx, { userId: by, action: 'return.close', entity: 'return', entityId: id, comment: note, detail: { serial: r.serial, disposition, cause, causeClass } })
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
 * @throws ReturnError 400 `empty_file`, 415 `unsupported_attachment`, 404 `unknown_return`, 409 `return_closed`.
 */
export async function addReturnAttachment(
  db: Knex,
  storage: AttachmentStorage,
  id: number,
  file: { path: string; originalName: string; size: number },
  by: number | null,
): Promise<ReturnAttachmentView> {
  if (file.size === 0) throw new ReturnError(400, 'empty_file', 'The file is empty')
  const type = sniffAttachmentType(await readHead(file.path))
  if (!type) throw new ReturnError(415, 'unsupported_attachment', 'Attach a photo (PNG or JPEG) or a PDF document; the file\'s contents are none of these')
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

/** An attachment's bytes and how to name it in a download. @throws ReturnError 404 `unknown_attachment`. */
export async function readReturnAttachment(db: Knex, storage: AttachmentStorage, id: number, attachmentId: number): Promise<{ view: ReturnAttachmentView; bytes: Buffer }> {
  const a = await getReturnAttachment(db, id, attachmentId)
  if (!a) throw new ReturnError(404, 'unknown_attachment', `Return ${id} has no attachment ${attachmentId}`)
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
  return acceptUpload(db, storage, boss, {
    tempPath: src.tempPath,
    originalName: src.originalName,
    fields: { serial: src.fields.serial || r.serial, ambientC: src.fields.ambientC, note: src.fields.note },
    station: src.station,
    userId: src.userId,
    returnId: id,
  })
}

// ---- Categories (admins) ----

/** @throws ReturnError 409 `category_exists` for a label already used. */
export async function addReturnCategory(db: Knex, c: { label: string; sortOrder?: number }): Promise<ReturnCategoryView> {
  try {
    return (await getReturnCategory(db, await createReturnCategory(db, c)))!
  } catch (err) {
    if (isUniqueViolation(err)) throw new ReturnError(409, 'category_exists', `A category "${c.label}" exists already`)
    throw err
  }
}

/** @throws ReturnError 404 `unknown_category`, 409 `category_exists`. */
export async function editReturnCategory(db: Knex, id: number, change: { label?: string; active?: boolean; sortOrder?: number }): Promise<ReturnCategoryView> {
  try {
    if (!(await updateReturnCategory(db, id, change))) throw new ReturnError(404, 'unknown_category', `No complaint category ${id}`)
  } catch (err) {
    if (isUniqueViolation(err)) throw new ReturnError(409, 'category_exists', `A category "${change.label}" exists already`)
    throw err
  }
  return (await getReturnCategory(db, id))!
}
