import { randomUUID } from 'node:crypto'
import { join } from 'node:path'
import { loadConfig } from '../utils/config.ts'
import { DirectoryStorage, type RecordingStorage } from './recordings.ts'
import { RETURN_ATTACHMENT_EXTENSIONS } from '../../shared/utils/returns.ts'

/**
 * Where return attachments (photos, documents) live: the same directory store as recordings, in
 * `<data dir>/attachments`, outside `public/`. A key is built from the date, a random id and the
 * content hash, never from the uploader's file name; the type comes from the bytes, not the name.
 */
export type AttachmentStorage = RecordingStorage

export type AttachmentType = 'image/png' | 'image/jpeg' | 'application/pdf'

/** PNG: the 8-byte signature, then the IHDR chunk (length 13) as the first chunk (PNG spec, ISO/IEC 15948 §5.2, §11.2.2). */
const PNG_SIGNATURE = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a])
const PNG_IHDR = Buffer.from([0x00, 0x00, 0x00, 0x0d, 0x49, 0x48, 0x44, 0x52])
/** JPEG: start of image FF D8, then a marker FF xx (ITU-T T.81, Annex B). */
const JPEG_SOI = Buffer.from([0xff, 0xd8, 0xff])
/** PDF: the header %PDF-1.x or %PDF-2.x (ISO 32000, §7.5.2). */
const PDF_HEADER = /^%PDF-[12]\.\d/

/** The type of an attachment read from its first bytes; null when it is none of PNG, JPEG or PDF. */
export function sniffAttachmentType(head: Buffer): AttachmentType | null {
  if (head.length >= 16 && head.subarray(0, 8).equals(PNG_SIGNATURE) && head.subarray(8, 16).equals(PNG_IHDR)) return 'image/png'
  if (head.length >= 4 && head.subarray(0, 3).equals(JPEG_SOI) && head[3]! >= 0xc0 && head[3]! !== 0xff) return 'image/jpeg'
  if (head.length >= 8 && PDF_HEADER.test(head.subarray(0, 8).toString('latin1'))) return 'application/pdf'
  return null
}

/** A key that never collides and never holds the uploader's file name. */
export function newAttachmentKey(sha256: string, type: AttachmentType, now = new Date()): string {
  const y = now.getUTCFullYear()
  const m = String(now.getUTCMonth() + 1).padStart(2, '0')
  return `${y}/${m}/${randomUUID()}-${sha256.slice(0, 12)}.${RETURN_ATTACHMENT_EXTENSIONS[type][0]}`
}

/** Largest attachment, bytes (CONETRAIL_MAX_ATTACHMENT_MB, default 10 MB: a phone photo is 2–6 MB). */
export function maxAttachmentBytes(env: NodeJS.ProcessEnv = process.env): number {
  const mb = Number(env.CONETRAIL_MAX_ATTACHMENT_MB)
  return (Number.isFinite(mb) && mb > 0 ? mb : 10) * 1024 * 1024
}

export function attachmentStorage(dataDir: string): AttachmentStorage {
  return new DirectoryStorage(join(dataDir, 'attachments'))
}

let shared: AttachmentStorage | undefined

/** The server's attachment store, in the configured data directory. */
export function useAttachmentStorage(): AttachmentStorage {
  shared ??= attachmentStorage(loadConfig().dataDir)
  return shared
}
