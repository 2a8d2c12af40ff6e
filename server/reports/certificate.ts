/**
 * A unit's test certificate: one A4 page for the customer (pdfkit, built-in Helvetica), stating the
 * latest production test of one unit: serial, product, lot, date, station, verdict, the mask
 * version that judged it, the figures beside their limits, a small response chart against the
 * mask band, and when and by what it was issued. Text is cut to fit, so the page never overflows.
 */
import type { RecordingCurves, RecordingView } from '../../shared/types/api.ts'
import type { UnitView } from '../../shared/types/units.ts'
import { limitAtHz } from '../../shared/utils/mask.ts'
import { parameterRows } from '../../shared/utils/units.ts'
import { A4, renderA4Pdf, toWinAnsi, type Doc } from './pdf-document.ts'

export interface CertificateData {
  unit: UnitView
  /** The test the certificate states (the unit's latest finished production test). */
  test: RecordingView
  curves: RecordingCurves | null
  issuedAt: string
}

const PAGE = { ...A4, margin: 56 }
const INK = '#141c24'
const MUTED = '#5f6b78'
const RULE = '#c9c4b8'
const ACCENT = '#a8541f'
const BAND = '#f1e4d8'
const PASS = '#0a6b36'
const FAIL = '#a3160e'
const CHART_HZ: [number, number] = [20, 20000]
const CHART_TICKS = [20, 50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000]


function text(doc: Doc, s: string, x: number, y: number, width: number, size = 10, color = INK, font = 'Helvetica') {
  doc.font(font).fontSize(size).fillColor(color)
  const full = toWinAnsi(s)
  let t = full
  if (doc.widthOfString(t) > width) {
    while (t.length > 1 && doc.widthOfString(`${t}…`) > width) t = t.slice(0, -1)
    t = `${t}…`
  }
  doc.text(t, x, y, { lineBreak: false, width })
}

/** "2026-12-02 14:03 UTC": the certificate names its time zone rather than guess the reader's. */
export function utcStamp(iso: string): string {
  return `${iso.slice(0, 10)} ${iso.slice(11, 16)} UTC`
}

/** A retest is stated as such: the unit was not decided by this test (measure it again before certifying). */
const VERDICT_WORD = { pass: 'PASS', fail: 'FAIL', retest: 'RETEST' } as const

function header(doc: Doc, d: CertificateData, x: number, w: number): number {
  doc.rect(0, 0, PAGE.width, 8).fill(ACCENT)
  text(doc, 'CONETRAIL', x, 34, 200, 10, ACCENT, 'Helvetica-Bold')
  text(doc, 'End-of-line test certificate', x, 50, w, 20, INK, 'Helvetica-Bold')
  text(doc, `Certificate ${d.unit.serial}/${d.test.id}`, x, 76, w, 9, MUTED)
  const verdict = d.test.verdict
  const box = { x: x + w - 150, y: 34, w: 150, h: 52 }
  doc.lineWidth(2).rect(box.x, box.y, box.w, box.h).stroke(verdict === 'pass' ? PASS : verdict === 'fail' ? FAIL : MUTED)
  text(doc, 'Verdict', box.x + 10, box.y + 7, box.w - 20, 8, MUTED)
  text(doc, verdict ? VERDICT_WORD[verdict] : 'NOT JUDGED', box.x + 10, box.y + 20, box.w - 20, verdict ? 22 : 14, verdict === 'pass' ? PASS : verdict === 'fail' ? FAIL : INK, 'Helvetica-Bold')
  return 104
}

function facts(doc: Doc, d: CertificateData, x: number, y: number, w: number): number {
  const rows: [string, string][] = [
    ['Serial number', d.unit.serial],
    ['Product', `${d.unit.product.code} · ${d.unit.product.name}`],
    ['Rated impedance', `${d.unit.product.ratedImpedanceOhm} ohm`],
    ['Lot', d.unit.lot?.code ?? '–'],
    ['Tested', utcStamp(d.test.uploadedAt)],
    ['Station', d.test.stationName ?? '– (impedance table)'],
    ['Judged by', d.test.maskVersion ? `mask version ${d.test.maskVersion} of ${d.unit.product.code}` : 'no mask was released for this product'],
  ]
  doc.moveTo(x, y).lineTo(x + w, y).lineWidth(0.6).stroke(RULE)
  y += 10
  for (const [k, v] of rows) {
    text(doc, k, x, y, 130, 10, MUTED)
    text(doc, v, x + 140, y, w - 140, 10, INK, k === 'Serial number' ? 'Courier-Bold' : 'Helvetica-Bold')
    y += 16
  }
  return y + 6
}

function parameterTable(doc: Doc, d: CertificateData, x: number, y: number, w: number): number {
  const rows = parameterRows(d.test.parameters, d.test.flags, d.test.checks)
  const cols = [
    { title: 'Figure', x, w: 160 },
    { title: 'Measured', x: x + 165, w: 70 },
    { title: 'Unit', x: x + 240, w: 45 },
    { title: 'Low limit', x: x + 290, w: 60 },
    { title: 'High limit', x: x + 355, w: 60 },
    { title: 'Check', x: x + 420, w: w - 420 },
  ]
  text(doc, 'Figures and limits', x, y, w, 12, INK, 'Helvetica-Bold')
  y += 20
  for (const c of cols) text(doc, c.title, c.x, y, c.w, 8, MUTED, 'Helvetica-Bold')
  y += 12
  doc.moveTo(x, y).lineTo(x + w, y).lineWidth(0.6).stroke(RULE)
  y += 5
  for (const r of rows) {
    const cells = [r.label, r.value, r.unit, r.low, r.high, r.outcome === null ? 'not judged' : r.outcome === 'pass' ? 'pass' : r.outcome === 'undecided' ? 'undecided' : 'FAIL']
    cells.forEach((cell, i) => {
      const c = cols[i]!
      const color = i === 5 && r.outcome === 'fail' ? FAIL : i === 5 && (r.outcome === null || r.outcome === 'undecided') ? MUTED : INK
      text(doc, cell, c.x, y, c.w, 9.5, color, i === 1 || i === 5 ? 'Helvetica-Bold' : 'Helvetica')
    })
    y += 15
  }
  const failedCurves = d.test.checks.filter((c) => (c.name === 'splDb' || c.name === 'impedanceOhm') && !c.pass && !c.undecided)
  const spl = d.test.checks.find((c) => c.name === 'splDb')
  const curveNote = spl
    ? `Response curve against the mask band: ${spl.undecided ? 'could not decide' : failedCurves.some((c) => c.name === 'splDb') ? 'outside' : 'inside'}.`
    : 'The mask holds no response band.'
  text(doc, curveNote, x, y + 3, w, 9, MUTED)
  return y + 22
}

function responseChart(doc: Doc, curves: RecordingCurves, x: number, y: number, w: number, h: number) {
  text(doc, 'Frequency response (dB SPL at 2.83 V, 1 m) with the mask band', x, y, w, 12, INK, 'Helvetica-Bold')
  const top = y + 22
  const ch = h - 40
  const values = curves.splDb ?? []
  const band = curves.maskSplDb
  const inRange = (f: number) => f >= CHART_HZ[0] && f <= CHART_HZ[1]
  const pts = curves.freqHz.map((f, i) => ({ f, v: values[i] ?? null, lo: band ? limitAtHz(band.freqHz, band.low, f) : null, hi: band ? limitAtHz(band.freqHz, band.high, f) : null })).filter((p) => inRange(p.f))
  const all = pts.flatMap((p) => [p.v, p.lo, p.hi]).filter((v): v is number => v !== null)
  if (all.length === 0) {
    text(doc, 'No response curve in this test.', x, top + ch / 2, w, 9, MUTED)
    return
  }
  const lo = Math.floor(Math.min(...all) / 10) * 10
  const hi = Math.ceil(Math.max(...all) / 10) * 10
  const sx = (f: number) => x + 30 + ((Math.log10(f) - Math.log10(CHART_HZ[0])) / (Math.log10(CHART_HZ[1]) - Math.log10(CHART_HZ[0]))) * (w - 30)
  const sy = (v: number) => top + ch - ((v - lo) / (hi - lo || 1)) * ch
  for (let v = lo; v <= hi; v += 10) {
    doc.moveTo(x + 30, sy(v)).lineTo(x + w, sy(v)).lineWidth(0.3).stroke(RULE)
    text(doc, String(v), x, sy(v) - 4, 26, 7, MUTED)
  }
  for (const f of CHART_TICKS) text(doc, f >= 1000 ? `${f / 1000}k` : String(f), sx(f) - 8, top + ch + 4, 24, 7, MUTED)
  // The band: filled between its high and low lines where both are set.
  const banded = pts.filter((p) => p.lo !== null && p.hi !== null)
  if (banded.length > 1) {
    doc.moveTo(sx(banded[0]!.f), sy(banded[0]!.hi!))
    for (const p of banded) doc.lineTo(sx(p.f), sy(p.hi!))
    for (const p of [...banded].reverse()) doc.lineTo(sx(p.f), sy(p.lo!))
    doc.closePath().fill(BAND)
  }
  for (const side of ['lo', 'hi'] as const) {
    let open = false
    for (const p of pts) {
      const v = p[side]
      if (v === null) {
        open = false
        continue
      }
      if (open) doc.lineTo(sx(p.f), sy(v))
      else doc.moveTo(sx(p.f), sy(v))
      open = true
    }
    doc.lineWidth(0.8).dash(3, { space: 2 }).stroke(ACCENT).undash()
  }
  let open = false
  for (const p of pts) {
    if (p.v === null) {
      open = false
      continue
    }
    if (open) doc.lineTo(sx(p.f), sy(p.v))
    else doc.moveTo(sx(p.f), sy(p.v))
    open = true
  }
  doc.lineWidth(1.2).stroke(INK)
  text(doc, `Hz · solid: this unit · dashed: mask limits${band ? '' : ' (none)'}`, x + 30, top + ch + 16, w - 30, 7, MUTED)
}

function footer(doc: Doc, d: CertificateData, x: number, w: number) {
  const y = PAGE.height - 96
  doc.moveTo(x, y).lineTo(x + w, y).lineWidth(0.6).stroke(RULE)
  text(doc, `Issued ${utcStamp(d.issuedAt)} · issued by Conetrail`, x, y + 10, w, 10, INK, 'Helvetica-Bold')
  text(doc, 'This certificate states the result of the end-of-line test of the unit named above, on the date shown,', x, y + 28, w, 8, MUTED)
  text(doc, 'against the limits of the mask version named. It is generated from the factory record and carries no signature.', x, y + 39, w, 8, MUTED)
}

/** The certificate as a one-page A4 PDF. */
export function renderCertificatePdf(d: CertificateData): Promise<Buffer> {
  return renderA4Pdf({ title: `Test certificate ${d.unit.serial}`, createdAt: new Date(d.issuedAt), margin: PAGE.margin }, (doc) => {
    const x = PAGE.margin
    const w = PAGE.width - 2 * PAGE.margin
    let y = header(doc, d, x, w)
    y = facts(doc, d, x, y, w)
    y = parameterTable(doc, d, x, y + 6, w)
    if (d.curves?.splDb) responseChart(doc, d.curves, x, y + 8, w, Math.min(230, PAGE.height - 110 - (y + 8)))
    footer(doc, d, x, w)
  })
}
