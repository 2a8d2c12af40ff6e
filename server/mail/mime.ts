/**
 * Just enough MIME (RFC 5322 headers, RFC 2045–2047 encodings, RFC 2046 multipart, RFC 2231
 * parameter continuations) to list what the local mail sink received: from, to, subject, date,
 * the first text part and the attachment names. Not a general mail parser: the sink only ever
 * sees what nodemailer writes.
 */

export interface MailSummary {
  from: string
  to: string[]
  subject: string
  date: string | null
  attachments: string[]
}

export interface ParsedMessage extends MailSummary {
  text: string | null
  html: string | null
}

type Headers = Map<string, string[]>

/** Splits a message (or a part) into its unfolded headers and its body. */
export function splitHeaders(raw: string): { headers: Headers; body: string } {
  const m = /\r?\n\r?\n/.exec(raw)
  const head = m ? raw.slice(0, m.index) : raw
  const body = m ? raw.slice(m.index + m[0].length) : ''
  const headers: Headers = new Map()
  // Unfolding (RFC 5322 §2.2.3): a line break followed by white space belongs to the header before it.
  for (const line of head.replace(/\r?\n(?=[ \t])/g, '').split(/\r?\n/)) {
    const colon = line.indexOf(':')
    if (colon <= 0) continue
    const name = line.slice(0, colon).trim().toLowerCase()
    const list = headers.get(name) ?? []
    list.push(line.slice(colon + 1).trim())
    headers.set(name, list)
  }
  return { headers, body }
}

function decodeBytes(bytes: Buffer, charset: string): string {
  try {
    return new TextDecoder(charset.toLowerCase() || 'utf-8').decode(bytes)
  } catch {
    return bytes.toString('latin1')
  }
}

/** Quoted-printable (RFC 2045 §6.7) to bytes; `header` also turns "_" into a space (RFC 2047 Q). */
export function decodeQuotedPrintable(s: string, header = false): Buffer {
  const src = header ? s.replace(/_/g, ' ') : s.replace(/=\r?\n/g, '')
  const out: number[] = []
  for (let i = 0; i < src.length; i++) {
    const c = src[i]!
    const hex = src.slice(i + 1, i + 3)
    if (c === '=' && /^[0-9A-Fa-f]{2}$/.test(hex)) {
      out.push(parseInt(hex, 16))
      i += 2
    } else {
      out.push(...Buffer.from(c, 'utf8'))
    }
  }
  return Buffer.from(out)
}

/** Encoded words (RFC 2047): =?charset?B|Q?text?=, white space between two of them dropped. */
export function decodeWords(value: string): string {
  return value
    .replace(/(=\?[^?]+\?[BbQq]\?[^?]*\?=)\s+(?==\?[^?]+\?[BbQq]\?[^?]*\?=)/g, '$1')
    .replace(/=\?([^?*]+)(?:\*[^?]*)?\?([BbQq])\?([^?]*)\?=/g, (_all, charset: string, enc: string, text: string) =>
      decodeBytes(enc.toUpperCase() === 'B' ? Buffer.from(text, 'base64') : decodeQuotedPrintable(text, true), charset),
    )
}

/** A structured header's value and parameters (RFC 2045 §5.1), with RFC 2231 continuations and charsets. */
export function parseParams(value: string): { value: string; params: Record<string, string> } {
  const parts: string[] = []
  let cur = ''
  let quoted = false
  for (const ch of value) {
    if (ch === '"') quoted = !quoted
    if (ch === ';' && !quoted) {
      parts.push(cur)
      cur = ''
    } else cur += ch
  }
  parts.push(cur)
  const pieces = new Map<string, { index: number; text: string; extended: boolean }[]>()
  for (const p of parts.slice(1)) {
    const eq = p.indexOf('=')
    if (eq < 0) continue
    const key = p.slice(0, eq).trim().toLowerCase()
    let val = p.slice(eq + 1).trim()
    if (val.startsWith('"') && val.endsWith('"')) val = val.slice(1, -1).replace(/\\(.)/g, '$1')
    const m = /^([^*]+)(?:\*(\d+))?(\*)?$/.exec(key)
    if (!m) continue
    const list = pieces.get(m[1]!) ?? []
    list.push({ index: Number(m[2] ?? 0), text: val, extended: Boolean(m[3]) })
    pieces.set(m[1]!, list)
  }
  const params: Record<string, string> = {}
  for (const [name, list] of pieces) {
    list.sort((a, b) => a.index - b.index)
    if (list.some((p) => p.extended)) {
      // RFC 2231: charset'language'percent-encoded in the first piece.
      let charset = 'utf-8'
      const bytes: number[] = []
      list.forEach((p, i) => {
        let t = p.text
        if (i === 0 && p.extended) {
          const m2 = /^([^']*)'[^']*'(.*)$/.exec(t)
          if (m2) {
            charset = m2[1] || charset
            t = m2[2]!
          }
        }
        if (p.extended) {
          for (let k = 0; k < t.length; k++) {
            if (t[k] === '%' && /^[0-9A-Fa-f]{2}$/.test(t.slice(k + 1, k + 3))) {
              bytes.push(parseInt(t.slice(k + 1, k + 3), 16))
              k += 2
            } else bytes.push(...Buffer.from(t[k]!, 'utf8'))
          }
        } else bytes.push(...Buffer.from(t, 'utf8'))
      })
      params[name] = decodeBytes(Buffer.from(bytes), charset)
    } else {
      params[name] = decodeWords(list.map((p) => p.text).join(''))
    }
  }
  return { value: parts[0]!.trim().toLowerCase(), params }
}

/** Addresses of an address-list header, bare ("a@example.test"), display names dropped. */
export function parseAddresses(value: string | undefined): string[] {
  if (!value) return []
  const out: string[] = []
  for (const m of decodeWords(value).matchAll(/<([^<>\s]+@[^<>\s]+)>|([^\s<>,;"]+@[^\s<>,;"]+)/g)) out.push((m[1] ?? m[2])!)
  return out
}

function decodeBody(body: string, encoding: string | undefined, charset: string | undefined): string {
  const enc = (encoding ?? '7bit').toLowerCase()
  const bytes = enc === 'base64' ? Buffer.from(body.replace(/\s+/g, ''), 'base64') : enc === 'quoted-printable' ? decodeQuotedPrintable(body) : Buffer.from(body, 'utf8')
  return decodeBytes(bytes, charset ?? 'utf-8')
}

interface Walk {
  text: string | null
  html: string | null
  attachments: string[]
}

function walk(raw: string, into: Walk, depth = 0): void {
  const { headers, body } = splitHeaders(raw)
  const type = parseParams(headers.get('content-type')?.[0] ?? 'text/plain')
  const disposition = headers.get('content-disposition')?.[0]
  const disp = disposition ? parseParams(disposition) : null
  const filename = disp?.params.filename ?? (disp?.value === 'attachment' ? type.params.name : undefined)
  if (type.value.startsWith('multipart/') && type.params.boundary && depth < 10) {
    const delimiter = `--${type.params.boundary}`
    const segments = body.split(new RegExp(`\\r?\\n?${delimiter.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}`))
    // Before the first delimiter is the preamble; from the closing one ("--" suffix) on, the epilogue.
    for (const seg of segments.slice(1)) {
      if (seg.startsWith('--')) break
      walk(seg.replace(/^[ \t]*\r?\n/, ''), into, depth + 1)
    }
    return
  }
  if (filename || disp?.value === 'attachment') {
    into.attachments.push(filename ?? type.params.name ?? 'attachment')
    return
  }
  const enc = headers.get('content-transfer-encoding')?.[0]
  if (type.value === 'text/plain' && into.text === null) into.text = decodeBody(body, enc, type.params.charset)
  else if (type.value === 'text/html' && into.html === null) into.html = decodeBody(body, enc, type.params.charset)
}

/** The parts of a raw message the mailbox page shows. */
export function parseMessage(raw: string): ParsedMessage {
  const { headers } = splitHeaders(raw)
  const found: Walk = { text: null, html: null, attachments: [] }
  walk(raw, found)
  const date = headers.get('date')?.[0]
  const parsedDate = date ? new Date(date) : null
  return {
    from: decodeWords(headers.get('from')?.[0] ?? ''),
    to: ['to', 'cc'].flatMap((h) => (headers.get(h) ?? []).flatMap(parseAddresses)),
    subject: decodeWords(headers.get('subject')?.[0] ?? ''),
    date: parsedDate && !Number.isNaN(parsedDate.getTime()) ? parsedDate.toISOString() : null,
    attachments: found.attachments,
    text: found.text,
    html: found.html,
  }
}
