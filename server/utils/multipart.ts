import { mkdir, rm } from 'node:fs/promises'
import { join } from 'node:path'
import type { H3Event } from 'h3'
import formidable, { errors as formidableErrors } from 'formidable'
import { loadConfig } from './config'
import { DomainError } from '../../shared/utils/domain-error'

/** Largest upload accepted (CONETRAIL_MAX_UPLOAD_MB, default 64 MB): a 192 kHz 3-channel 32-bit sweep of 20 s is about 46 MB. */
export function maxUploadBytes(): number {
  const mb = Number(process.env.CONETRAIL_MAX_UPLOAD_MB)
  return (Number.isFinite(mb) && mb > 0 ? mb : 64) * 1024 * 1024
}

export interface ParsedUpload {
  fields: Record<string, string>
  file: { path: string; originalName: string; size: number } | null
}

/**
 * Streams a multipart/form-data body to a temporary file in the data directory (never into memory).
 * Text fields come back as strings; exactly one file field named `file` is taken. `maxBytes`
 * (default: the recording limit, maxUploadBytes) lets a route take smaller files (attachments).
 * @throws 415 `not_multipart`, 413 `too_large`, 400 `bad_multipart`; temporary files are removed on error.
 */
export async function readMultipartUpload(event: H3Event, opts: { maxBytes?: number } = {}): Promise<ParsedUpload> {
  const maxBytes = opts.maxBytes ?? maxUploadBytes()
  const type = getHeader(event, 'content-type') ?? ''
  if (!type.toLowerCase().startsWith('multipart/form-data')) {
    throw new DomainError('not_multipart', 'Send the recording as multipart/form-data with a "file" field')
  }
  const uploadDir = join(loadConfig().dataDir, 'tmp', 'uploads')
  await mkdir(uploadDir, { recursive: true })
  const form = formidable({
    uploadDir,
    maxFiles: 1,
    maxFileSize: maxBytes,
    maxTotalFileSize: maxBytes,
    maxFields: 20,
    maxFieldsSize: 64 * 1024,
    allowEmptyFiles: true,
    minFileSize: 0,
    keepExtensions: false,
  })
  const written: string[] = []
  form.on('fileBegin', (_name, file) => written.push(file.filepath))
  try {
    const [fields, files] = await form.parse(event.node.req)
    const extra = Object.entries(files).filter(([name]) => name !== 'file').flatMap(([, list]) => list ?? [])
    await Promise.all(extra.map((f) => rm(f.filepath, { force: true })))
    const f = files.file?.[0]
    return {
      fields: Object.fromEntries(Object.entries(fields).map(([k, v]) => [k, v?.[0] ?? ''])),
      file: f ? { path: f.filepath, originalName: f.originalFilename ?? 'recording', size: f.size } : null,
    }
  } catch (err) {
    await Promise.all(written.map((p) => rm(p, { force: true })))
    const e = err as { code?: number; httpCode?: number; message?: string }
    if (e.httpCode === 413 || e.code === formidableErrors.biggerThanTotalMaxFileSize || e.code === formidableErrors.biggerThanMaxFileSize) {
      throw new DomainError('too_large', `The file is larger than the ${Math.round(maxBytes / 1048576)} MB limit`)
    }
    throw new DomainError('bad_multipart', `The upload could not be read: ${e.message ?? 'malformed multipart body'}`)
  }
}
