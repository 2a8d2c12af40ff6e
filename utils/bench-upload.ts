import type { ApiErrorBody, UploadAccepted } from '#shared/types/api'
import { codeForStatus, isErrorCode } from '#shared/utils/error-codes'

export interface BenchUploadRequest {
  serial: string
  file: File
  stationId: number | null
  productCode: string | null
  lotCode?: string
  ambientC?: number | null
}

/** The rejection of a failed upload, shaped like a $fetch error so apiErrorOf reads it. */
class UploadError extends Error {
  constructor(readonly data: ApiErrorBody) {
    super(data.message)
  }
}

function isApiErrorBody(v: unknown): v is ApiErrorBody {
  return !!v && typeof v === 'object' && typeof (v as { message?: unknown }).message === 'string'
}

function isUploadAccepted(v: unknown): v is UploadAccepted {
  return !!v && typeof v === 'object' && typeof (v as { id?: unknown }).id === 'number'
}

function parseJson(text: string): unknown {
  try {
    return JSON.parse(text)
  } catch {
    return null
  }
}

/**
 * Posts one recording as multipart/form-data (the same fields external stations send) with
 * XMLHttpRequest, because fetch cannot report upload progress. Resolves with the accepted
 * upload (202, or 200 for the same file again); rejects with an error apiErrorOf understands.
 */
export function uploadRecording(req: BenchUploadRequest, onProgress: (fraction: number) => void, signal?: AbortSignal): Promise<UploadAccepted> {
  const form = new FormData()
  form.append('serial', req.serial)
  if (req.productCode) form.append('product', req.productCode)
  if (req.stationId !== null) form.append('station', String(req.stationId))
  if (req.lotCode?.trim()) form.append('lot', req.lotCode.trim())
  if (typeof req.ambientC === 'number' && Number.isFinite(req.ambientC)) form.append('ambientC', String(req.ambientC))
  form.append('file', req.file, req.file.name)

  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest()
    xhr.open('POST', '/api/recordings')
    xhr.setRequestHeader('accept', 'application/json')
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable && e.total > 0) onProgress(e.loaded / e.total)
    }
    xhr.onload = () => {
      const body = parseJson(xhr.responseText)
      if (xhr.status >= 200 && xhr.status < 300 && isUploadAccepted(body)) {
        onProgress(1)
        resolve(body)
      } else if (isApiErrorBody(body)) {
        reject(new UploadError({ statusCode: xhr.status, message: body.message, data: { code: isErrorCode(body.data?.code) ? body.data!.code : codeForStatus(xhr.status) } }))
      } else {
        const message = xhr.status === 413 ? 'The file is too large for an upload.' : `The server answered ${xhr.status}. Try again.`
        reject(new UploadError({ statusCode: xhr.status, message, data: { code: codeForStatus(xhr.status) } }))
      }
    }
    // Network failure: apiErrorOf turns a plain Error into "the server could not be reached".
    xhr.onerror = () => reject(new Error('network'))
    xhr.onabort = () => reject(new DOMException('upload cancelled', 'AbortError'))
    signal?.addEventListener('abort', () => xhr.abort(), { once: true })
    xhr.send(form)
  })
}
