import type { RecordingView, UploadAccepted } from '../../shared/types/api'

export type Auth = { cookie: string } | { token: string } | Record<string, never>

function headersOf(auth: Auth): Record<string, string> {
  if ('cookie' in auth) return { cookie: auth.cookie }
  if ('token' in auth) return { authorization: `Bearer ${auth.token}` }
  return {}
}

/** POSTs a multipart upload to /api/recordings the way station software does. */
export async function postRecording(
  host: string,
  auth: Auth,
  fields: Record<string, string | number | undefined>,
  file: { bytes: Uint8Array | string; name: string } | null,
): Promise<{ status: number; body: UploadAccepted & { message?: string; data?: { code: string } } }> {
  const form = new FormData()
  for (const [k, v] of Object.entries(fields)) if (v !== undefined) form.append(k, String(v))
  if (file) form.append('file', new Blob([typeof file.bytes === 'string' ? file.bytes : Buffer.from(file.bytes)]), file.name)
  const res = await fetch(new URL('/api/recordings', host), { method: 'POST', headers: headersOf(auth), body: form })
  return { status: res.status, body: (await res.json()) as never }
}

export async function getRecording(host: string, auth: Auth, id: number, query = ''): Promise<{ status: number; body: RecordingView }> {
  const res = await fetch(new URL(`/api/recordings/${id}${query}`, host), { headers: headersOf(auth) })
  return { status: res.status, body: (await res.json()) as RecordingView }
}

/** Polls a recording until the worker has finished with it (done, rejected or failed); usable in hooks too. */
export async function waitFinished(host: string, auth: Auth, id: number, timeoutMs = 30_000): Promise<RecordingView> {
  const until = Date.now() + timeoutMs
  for (;;) {
    const { body } = await getRecording(host, auth, id)
    if (['done', 'rejected', 'failed'].includes(body.status)) return body
    if (Date.now() > until) throw new Error(`recording ${id} still ${body.status} after ${timeoutMs} ms`)
    await new Promise((r) => setTimeout(r, 150))
  }
}

/** One part of a hand-built multipart body: a text field, or a file part (`fileName` set; `type` null leaves out its Content-Type). */
export interface RawPart {
  name: string
  value: string | Uint8Array
  fileName?: string
  type?: string | null
}

/**
 * A multipart/form-data body built byte by byte, for shapes and names a FormData would not send
 * (a file part without a Content-Type, a control character in a file name).
 */
export function rawMultipart(parts: RawPart[]): { body: Uint8Array<ArrayBuffer>; contentType: string } {
  const boundary = `----conetrail-test-${Math.random().toString(36).slice(2)}`
  const chunks: Buffer[] = []
  for (const p of parts) {
    const disposition = `form-data; name="${p.name}"${p.fileName === undefined ? '' : `; filename="${p.fileName}"`}`
    const type = p.fileName === undefined || p.type === null ? '' : `Content-Type: ${p.type ?? 'application/octet-stream'}\r\n`
    chunks.push(Buffer.from(`--${boundary}\r\nContent-Disposition: ${disposition}\r\n${type}\r\n`, 'utf8'), Buffer.from(p.value), Buffer.from('\r\n'))
  }
  chunks.push(Buffer.from(`--${boundary}--\r\n`))
  return { body: new Uint8Array(Buffer.concat(chunks)), contentType: `multipart/form-data; boundary=${boundary}` }
}
