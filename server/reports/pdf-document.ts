/** What every PDF Conetrail renders (lot report, certificate) shares: the A4 document and its text. */
import PDFDocument from 'pdfkit'

export type Doc = InstanceType<typeof PDFDocument>

/** An A4 page in PDF points (ISO 216: 210 × 297 mm at 72 points per inch). */
export const A4 = { width: 595.28, height: 841.89 } as const

/** Letters the built-in Helvetica (WinAnsi encoding) lacks, spelled out; anything else outside it becomes "?". */
const SPELLED: Record<string, string> = { 'σ': ' sigma', 'Ω': 'ohm', '−': '-', '≥': '>=', '≤': '<=', '→': '->' }
const WIN_ANSI_EXTRA = new Set('€‚ƒ„…†‡ˆ‰Š‹ŒŽ‘’“”•–—˜™š›œžŸ')

export function toWinAnsi(text: string): string {
  return [...text].map((ch) => SPELLED[ch] ?? (ch.charCodeAt(0) <= 0xff || WIN_ANSI_EXTRA.has(ch) ? ch : '?')).join('')
}

/** Renders an A4 document (no top or bottom margin: each page places its own footer) to a buffer. */
export function renderA4Pdf(o: { title: string; createdAt: Date; margin: number }, draw: (doc: Doc) => void): Promise<Buffer> {
  return new Promise((resolve, reject) => {
    const doc = new PDFDocument({
      size: 'A4',
      margins: { top: 0, bottom: 0, left: o.margin, right: o.margin },
      info: { Title: o.title, Author: 'Conetrail', CreationDate: o.createdAt },
    })
    const chunks: Buffer[] = []
    doc.on('data', (c: Buffer) => chunks.push(c))
    doc.on('end', () => resolve(Buffer.concat(chunks)))
    doc.on('error', reject)
    draw(doc)
    doc.end()
  })
}
