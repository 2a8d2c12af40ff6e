/**
 * The lot report as a PDF, ready to send to a customer (pdfkit, built-in Helvetica).
 * Always three A4 pages, so a reader (and a test) knows where to look:
 * 1. summary (lot, product, mask version, yields, units, retests and the units needing review) and
 *    the failure Pareto as bars, with likely causes;
 * 2. distributions: a histogram per figure with the mask limits as lines, mean, sd, Cp and Cpk;
 * 3. drift: the individuals charts of Fs and Re with their control limits, flagged points and warnings.
 * Text is cut to fit its box, so no page overflows into an unplanned one.
 */
import type { ControlChartView, FigureDistribution, LotReport } from '../../shared/types/reports.ts'
import { A4, renderA4Pdf, toWinAnsi, type Doc } from './pdf-document.ts'

export const LOT_REPORT_PAGES = 3

const PAGE = { ...A4, margin: 48 }
const INK = '#1d1d1b'
const MUTED = '#6b6b66'
const BAR = '#8a6a4a'
const LIMIT = '#b03a2e'
const GRID = '#d8d6cf'
const MAX_PARETO_ROWS = 10


const pct = (v: number | null) => (v === null ? '–' : `${(v * 100).toFixed(1)} %`)
const num = (v: number | null, digits = 3) => (v === null || !Number.isFinite(v) ? '–' : Number(v.toPrecision(digits)).toString())

/** One line of text, cut with an ellipsis to the width, never wrapping onto a new page. */
function line(doc: Doc, text: string, x: number, y: number, width: number, size = 10, color = INK, font = 'Helvetica') {
  doc.font(font).fontSize(size).fillColor(color)
  let t = toWinAnsi(text)
  text = t
  while (t.length > 1 && doc.widthOfString(t) > width) t = t.slice(0, -2)
  if (t !== text) t = `${t.slice(0, -1)}…`
  doc.text(t, x, y, { lineBreak: false, width })
}

function footer(doc: Doc, report: LotReport, page: number) {
  line(doc, `Conetrail lot report ${report.lot.code} · generated ${report.generatedAt} · page ${page} of ${LOT_REPORT_PAGES}`, PAGE.margin, PAGE.height - 36, PAGE.width - 2 * PAGE.margin, 8, MUTED)
}

/** "2 units (3.3 %)", or "none". */
function retestLine(r: LotReport): string {
  const p = r.pareto
  return p.anyRetest.units ? `${p.anyRetest.units} units (${pct(p.anyRetest.fraction)})` : 'none'
}

/** "2 units: SN-1 (2), SN-7 (3)", the count first so it survives a cut, or "none". */
function reviewLine(r: LotReport): string {
  const u = r.needsReview.units
  return u.length ? `${u.length} ${u.length === 1 ? 'unit' : 'units'}: ${u.map((x) => `${x.serial} (${x.retests})`).join(', ')}` : 'none'
}

function summaryPage(doc: Doc, r: LotReport) {
  const x = PAGE.margin
  const w = PAGE.width - 2 * PAGE.margin
  line(doc, `Lot ${r.lot.code}`, x, 48, w, 20, INK, 'Helvetica-Bold')
  line(doc, `${r.lot.productCode} · ${r.lot.productName}`, x, 76, w, 11)
  line(doc, `Mask version: ${r.maskVersion ?? 'none released'} · lot opened ${r.lot.createdAt.slice(0, 10)} · ${r.lot.closedAt ? `closed ${r.lot.closedAt.slice(0, 10)}` : 'open'}`, x, 92, w, 9, MUTED)
  const s = r.summary
  const rows: [string, string][] = [
    ['Units tested', String(s.unitsTested)],
    ['Units judged', String(s.unitsJudged)],
    ['Units awaiting a retest', String(s.unitsAwaitingRetest)],
    ['Units never judged', String(s.unitsNeverJudged)],
    ['First-pass yield', `${pct(s.firstPassYield)} (${s.firstPassUnits} units)`],
    ['Final yield', `${pct(s.finalYield)} (${s.finalPassUnits} units)`],
    ['Tested more than once', `${pct(s.retestRate)} (${s.retestedUnits} ${s.retestedUnits === 1 ? 'unit' : 'units'})`],
    ['Marginal (within uncertainty of a limit)', `${s.marginalUnits} ${s.marginalUnits === 1 ? 'unit' : 'units'}`],
    ['Return rate', `${pct(s.returnRate)} (${s.returnedUnits} units returned, ${s.returns} returns)`],
    // Retests are not failures: counted apart from the Pareto of failing checks below.
    ['First result: retest', retestLine(r)],
    [`Needs review (${r.needsReview.retestLimit}+ retests in a row)`, reviewLine(r)],
  ]
  let y = 120
  for (const [k, v] of rows) {
    line(doc, k, x, y, 200, 11, MUTED)
    line(doc, v, x + 210, y, w - 210, 11, INK, 'Helvetica-Bold')
    y += 18
  }
  // Reasons on a line of their own, the width of the page: all six fit at this size.
  if (r.pareto.retests.length) {
    line(doc, `Retest reasons (first results, not failures): ${r.pareto.retests.map((x) => `${x.label} ${x.units}`).join(', ')}`, x, y, w, 9, MUTED)
    y += 14
  }
  y += 16
  line(doc, `Failures by check (each unit's first result; ${r.pareto.any.units} of ${r.pareto.unitsConsidered} units failed at least one check, ${pct(r.pareto.any.fraction)})`, x, y, w, 12, INK, 'Helvetica-Bold')
  y += 22
  const shown = r.pareto.rows.slice(0, MAX_PARETO_ROWS)
  if (shown.length === 0) line(doc, 'No failures.', x, y, w, 10, MUTED)
  const maxUnits = Math.max(1, ...shown.map((p) => p.units))
  const labelW = 110
  const barW = w - labelW - 60
  for (const p of shown) {
    line(doc, p.label, x, y + 2, labelW - 6, 10)
    const bw = Math.max(1, (barW * p.units) / maxUnits)
    doc.rect(x + labelW, y, bw, 12).fill(BAR)
    line(doc, `${p.units} (${pct(p.unitFraction)})`, x + labelW + bw + 6, y + 2, 80, 9)
    const causes = p.likelyCauses.flatMap((c) => c.causes).join('; ')
    if (causes) line(doc, `Likely: ${causes}`, x + labelW, y + 15, w - labelW, 8, MUTED)
    y += 34
  }
  if (r.pareto.rows.length > shown.length) line(doc, `… and ${r.pareto.rows.length - shown.length} more checks`, x, y, w, 9, MUTED)
  line(doc, r.causesNote, x, PAGE.height - 60, w, 8, MUTED)
}

function histogramBox(doc: Doc, d: FigureDistribution, x: number, y: number, w: number, h: number) {
  line(doc, `${d.label}${d.unit ? ` (${d.unit})` : ''}`, x, y, w, 11, INK, 'Helvetica-Bold')
  line(doc, `n ${d.n} · mean ${num(d.mean, 4)} · sd ${num(d.sd)} · Cp ${num(d.cp)} · Cpk ${num(d.cpk)}`, x, y + 15, w, 8, MUTED)
  line(doc, `limits: ${d.lsl ?? 'open'} to ${d.usl ?? 'open'}`, x, y + 26, w, 8, MUTED)
  const top = y + 40
  const ch = h - 56
  doc.moveTo(x, top + ch).lineTo(x + w, top + ch).lineWidth(0.5).strokeColor(GRID).stroke()
  const { edges, counts } = d.histogram
  if (counts.length === 0) {
    line(doc, 'No values.', x, top + ch / 2, w, 9, MUTED)
    return
  }
  const lo = edges[0]!
  const hi = edges[edges.length - 1]!
  const sx = (v: number) => x + ((v - lo) / (hi - lo || 1)) * w
  const maxCount = Math.max(1, ...counts)
  counts.forEach((c, i) => {
    const bh = (ch * c) / maxCount
    if (c > 0) doc.rect(sx(edges[i]!), top + ch - bh, Math.max(0.5, sx(edges[i + 1]!) - sx(edges[i]!) - 0.5), bh).fill(BAR)
  })
  for (const [v, name] of [[d.lsl, 'LSL'], [d.usl, 'USL']] as const) {
    if (v === null || v < lo || v > hi) continue
    doc.moveTo(sx(v), top).lineTo(sx(v), top + ch).lineWidth(1).strokeColor(LIMIT).stroke()
    line(doc, name, Math.min(sx(v) + 2, x + w - 20), top, 24, 7, LIMIT)
  }
  line(doc, num(lo, 4), x, top + ch + 3, 60, 7, MUTED)
  line(doc, num(hi, 4), x + w - 40, top + ch + 3, 40, 7, MUTED)
}

function distributionsPage(doc: Doc, r: LotReport) {
  const x = PAGE.margin
  const w = PAGE.width - 2 * PAGE.margin
  line(doc, `Distributions against the mask · lot ${r.lot.code}`, x, 48, w, 14, INK, 'Helvetica-Bold')
  line(doc, "Each unit's first production result that is not a retest. Cp and Cpk as in the NIST/SEMATECH e-Handbook, 6.1.6.", x, 68, w, 8, MUTED)
  const colW = (w - 24) / 2
  const boxH = 220
  r.distributions.forEach((d, i) => {
    histogramBox(doc, d, x + (i % 2) * (colW + 24), 92 + Math.floor(i / 2) * (boxH + 12), colW, boxH)
  })
}

function controlChart(doc: Doc, c: ControlChartView, x: number, y: number, w: number, h: number) {
  line(doc, `${c.label}${c.unit ? ` (${c.unit})` : ''}: individuals chart, limits from ${c.baseline === 'golden' ? 'the golden units' : 'the first in-control stretch'}`, x, y, w, 10, INK, 'Helvetica-Bold')
  line(doc, `centre ${num(c.centre, 4)} · UCL ${num(c.ucl, 4)} · LCL ${num(c.lcl, 4)} · ${c.signals.length} signals (red dots)`, x, y + 14, w, 8, MUTED)
  const top = y + 30
  const ch = h - 34
  const values = c.points.map((p) => p.value)
  const lo = Math.min(c.lcl, ...values)
  const hi = Math.max(c.ucl, ...values)
  const sy = (v: number) => top + ch - ((v - lo) / (hi - lo || 1)) * ch
  const sx = (i: number) => x + (c.points.length <= 1 ? 0 : (i / (c.points.length - 1)) * w)
  for (const [v, color] of [[c.ucl, LIMIT], [c.lcl, LIMIT], [c.centre, MUTED]] as const) {
    doc.moveTo(x, sy(v)).lineTo(x + w, sy(v)).lineWidth(0.7).strokeColor(color).stroke()
  }
  if (values.length > 0) {
    doc.moveTo(sx(0), sy(values[0]!))
    values.forEach((v, i) => doc.lineTo(sx(i), sy(v)))
    doc.lineWidth(0.6).strokeColor(INK).stroke()
  }
  for (const s of c.signals) doc.circle(sx(s.index), sy(values[s.index]!), 2.2).fill(LIMIT)
}

function driftPage(doc: Doc, r: LotReport) {
  const x = PAGE.margin
  const w = PAGE.width - 2 * PAGE.margin
  line(doc, `Drift over production order · lot ${r.lot.code}`, x, 48, w, 14, INK, 'Helvetica-Bold')
  line(doc, 'I-MR charts with the Western Electric run rules (NIST/SEMATECH e-Handbook 6.3.2).', x, 68, w, 8, MUTED)
  let y = 92
  for (const c of r.drift) {
    controlChart(doc, c, x, y, w, 200)
    y += 214
  }
  for (const n of r.driftNotes) {
    line(doc, n, x, y, w, 9, MUTED)
    y += 14
  }
  y += 8
  line(doc, 'Warnings', x, y, w, 12, INK, 'Helvetica-Bold')
  y += 18
  const warnings = r.drift.flatMap((c) => c.warnings)
  if (warnings.length === 0) line(doc, 'No run rule fired.', x, y, w, 9, MUTED)
  const room = Math.floor((PAGE.height - 60 - y) / 13)
  for (const wtext of warnings.slice(0, room)) {
    line(doc, `• ${wtext}`, x, y, w, 8)
    y += 13
  }
}

/** The lot report as a PDF (three A4 pages). */
export function renderLotReportPdf(report: LotReport): Promise<Buffer> {
  return renderA4Pdf({ title: `Lot report ${report.lot.code}`, createdAt: new Date(report.generatedAt), margin: PAGE.margin }, (doc) => {
    summaryPage(doc, report)
    footer(doc, report, 1)
    doc.addPage()
    distributionsPage(doc, report)
    footer(doc, report, 2)
    doc.addPage()
    driftPage(doc, report)
    footer(doc, report, 3)
  })
}
