import { createWriteStream, type WriteStream } from 'node:fs'
import { mkdir, rm } from 'node:fs/promises'
import { join } from 'node:path'
import { Writable } from 'node:stream'
import type { H3Event } from 'h3'
import formidable, { errors as formidableErrors, type Part } from 'formidable'
import { z } from 'zod'
import { loadConfig } from './config'
import { DomainError } from '../../shared/utils/domain-error'
import { plainText } from '../../shared/utils/input'
import { parseInput } from './errors'

/** Largest upload accepted (CONETRAIL_MAX_UPLOAD_MB, default 64 MB): a 192 kHz 3-channel 32-bit sweep of 20 s is about 46 MB. */
export function maxUploadBytes(): number {
  const mb = Number(process.env.CONETRAIL_MAX_UPLOAD_MB)
  return (Number.isFinite(mb) && mb > 0 ? mb : 64) * 1024 * 1024
}

export interface ParsedUpload {
  fields: Record<string, string>
  file: { path: string; originalName: string; size: number } | null
}

/** Text fields an upload form may hold, and their size together: a few short fields, never a file's worth. */
const MAX_FIELDS = 20
const MAX_FIELDS_BYTES = 64 * 1024

/** The uploader's file name is kept for display: refused (400 invalid_input, field `file`) when it holds a control character. */
const fileNameSchema = z.object({ file: plainText() })

/**
 * What is wrong with one part of the body, in words, or null: only the part named `file` may be a
 * file, and only once; a part with a file name but no Content-Type would be read as a text field.
 */
function partProblem(part: Part, fileSeen: boolean): string | null {
  const name = part.name ?? ''
  if (part.originalFilename !== null && !part.mimetype) {
    return `The part "${name}" has a file name but no Content-Type header: send the file as a file part (application/octet-stream will do)`
  }
  if (!part.mimetype) return null
  if (name !== 'file') return `The part "${name}" is sent as a file: only the field "file" may hold a file, other fields are plain text`
  if (fileSeen) return 'The upload holds two file parts named "file": send exactly one file'
  return null
}

/** The answer to a body formidable refused: 413 only when the file really is over the limit, otherwise what is wrong. */
function refusal(err: unknown, problem: string | null, maxBytes: number): DomainError {
  const e = err as { code?: number; message?: string }
  if (e.code === formidableErrors.biggerThanTotalMaxFileSize || e.code === formidableErrors.biggerThanMaxFileSize) {
    return new DomainError('too_large', `The file is larger than the ${Math.round(maxBytes / 1048576)} MB limit`)
  }
  if (problem) return new DomainError('bad_multipart', problem)
  const reason: Record<number, string> = {
    [formidableErrors.maxFieldsExceeded]: `The upload holds more than ${MAX_FIELDS} text fields`,
    [formidableErrors.maxFieldsSizeExceeded]: `The text fields are larger than ${MAX_FIELDS_BYTES / 1024} KB together: a note or a serial is short text, not a file`,
    [formidableErrors.maxFilesExceeded]: 'The upload holds more than one file: send exactly one, in the field "file"',
    [formidableErrors.missingMultipartBoundary]: 'The Content-Type header has no multipart boundary',
  }
  const known = e.code === undefined ? undefined : reason[e.code]
  return new DomainError('bad_multipart', known ?? `The upload could not be read: ${e.message ?? 'malformed multipart body'}`)
}

/**
 * Streams a multipart/form-data body to a temporary file in the data directory (never into memory).
 * Text fields come back as strings; exactly one file part, named `file`, is taken. `maxBytes`
 * (default: the recording limit, maxUploadBytes) lets a route take smaller files (attachments).
 * @throws 415 `not_multipart`; 413 `too_large` for a file over the limit; 400 `bad_multipart` with
 * the reason for a body of the wrong shape (a file part without a Content-Type, a second or an
 * extra file part, too many or too large text fields); 400 `invalid_input` (field `file`) for a
 * file name with a control character. Temporary files are removed whenever it throws.
 */
export async function readMultipartUpload(event: H3Event, opts: { maxBytes?: number } = {}): Promise<ParsedUpload> {
  const maxBytes = opts.maxBytes ?? maxUploadBytes()
  const type = getHeader(event, 'content-type') ?? ''
  if (!type.toLowerCase().startsWith('multipart/form-data')) {
    throw new DomainError('not_multipart', 'Send the recording as multipart/form-data with a "file" field')
  }
  const uploadDir = join(loadConfig().dataDir, 'tmp', 'uploads')
  await mkdir(uploadDir, { recursive: true })
  // Every file stream is ours (fileWriteStreamHandler), so a refused body's files are removed only
  // once their streams are closed (a stream still opening would create its file again after the
  // removal), and a file part formidable still starts after it failed (the rest of the chunk it was
  // parsing) writes nowhere.
  const streams: WriteStream[] = []
  const written: string[] = []
  let failed = false
  const form = formidable({
    uploadDir,
    fileWriteStreamHandler: (file) => {
      if (failed) return new Writable({ write: (_chunk, _encoding, done) => done() })
      const path = (file as unknown as { filepath: string }).filepath
      written.push(path)
      const stream = createWriteStream(path)
      streams.push(stream)
      return stream
    },
    maxFiles: 1,
    maxFileSize: maxBytes,
    maxTotalFileSize: maxBytes,
    maxFields: MAX_FIELDS,
    maxFieldsSize: MAX_FIELDS_BYTES,
    allowEmptyFiles: true,
    minFileSize: 0,
    keepExtensions: false,
  })
  form.on('error', () => (failed = true))
  const removeWritten = async () => {
    await Promise.all(streams.map((s) => (s.closed ? undefined : new Promise<void>((done) => s.once('close', () => done()).destroy()))))
    await Promise.all(written.map((p) => rm(p, { force: true })))
  }
  // The first problem of shape is kept; formidable still reads the part, so its own limits
  // (size, count) stop a body that goes on.
  let problem: string | null = null
  let fileSeen = false
  form.onPart = (part) => {
    problem ??= partProblem(part, fileSeen)
    if (part.mimetype && part.name === 'file') fileSeen = true
    form._handlePart(part)
  }
  let parsed: [formidable.Fields, formidable.Files]
  try {
    parsed = await form.parse(event.node.req)
  } catch (err) {
    // The rest of a refused body is read and dropped (formidable ignores it once it failed), so
    // the client finishes sending and reads the answer instead of a reset connection.
    event.node.req.resume()
    await removeWritten()
    throw refusal(err, problem, maxBytes)
  }
  const [fields, files] = parsed
  const f = files.file?.[0]
  try {
    if (problem) throw new DomainError('bad_multipart', problem)
    if (f) parseInput(fileNameSchema, { file: f.originalFilename ?? '' })
  } catch (err) {
    await removeWritten()
    throw err
  }
  return {
    fields: Object.fromEntries(Object.entries(fields).map(([k, v]) => [k, v?.[0] ?? ''])),
    file: f ? { path: f.filepath, originalName: f.originalFilename ?? 'recording', size: f.size } : null,
  }
}
