import Papa from 'papaparse'
import { PDFParse } from 'pdf-parse'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { generateRecording, type Defect } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import { SEEDED_CAUSES } from '../../migrations/20261202050000_likely_causes'
import type { DashboardView, LikelyCause, LotReport, LotSummary } from '../../shared/types/reports'
import type { RecordingView } from '../../shared/types/api'
import { LOT_REPORT_PAGES } from '../../server/reports/lot-report-pdf'
import { createMaskDraft, releaseMask } from '../../server/repos/masks'
import type { MaskLimitsInput } from '../../shared/utils/mask'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const host = await useTestServer()

/**
 * A hand-made lot with known answers (yield definitions: server/stats/yield.ts):
 * - G1..G4: one good recording each: first pass;
 * - B1: inverted polarity (fails `polarity`), then retested with a good recording: passes finally;
 * - B2: inverted polarity, never retested.
 * - G4 also has a later return test (inverted polarity, marked as a return test in the database, as
 *   the returns desk will): it never counts in production yield (glossary: "return test").
 * Units tested 6; first-pass yield 4/6; final yield 5/6; retest rate 1/6;
 * Pareto of first results: `polarity` 2 units, "any" 2 of 6.
 */
const PLAN: { name: string; tests: { seed: number; defect: Defect }[] }[] = [
  { name: 'G1', tests: [{ seed: 301, defect: 'none' }] },
  { name: 'B1', tests: [{ seed: 302, defect: 'inverted_polarity' }] },
  { name: 'G2', tests: [{ seed: 303, defect: 'none' }] },
  { name: 'B2', tests: [{ seed: 304, defect: 'inverted_polarity' }] },
  { name: 'G3', tests: [{ seed: 305, defect: 'none' }] },
  { name: 'G4', tests: [{ seed: 306, defect: 'none' }] },
]
const RETEST = { unit: 'B1', seed: 307, defect: 'none' as Defect }
const RETURN_TEST = { unit: 'G4', seed: 308, defect: 'inverted_polarity' as Defect }

let worker: RunningWorker
const cookies: Record<string, string> = {}
let product: { id: number; code: string }
/** Limits wide enough for any healthy unit of the test driver; the fixed checks (coil, polarity) still apply. */
const MASK_LIMITS: MaskLimitsInput = {
  scalars: { fsHz: { low: 20, high: 80 }, re20Ohm: { low: 4, high: 8 }, rubBuzzDb: { low: null, high: -50 } },
  polarityNormal: true,
  ratedImpedanceRule: true,
  curves: {},
}
const lotCode = unique('LOT')
const serials: Record<string, string> = {}
/** Each unit's first production recording, as the analysis saw it. */
const firstViews: Record<string, RecordingView> = {}

const get = (path: string, role: string) => fetch(new URL(path, host), { headers: { cookie: cookies[role]! } })

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  for (const role of ['technician', 'engineer', 'quality', 'support']) cookies[role] = (await signIn(host, demoEmail(role), DEMO_PASSWORD)).cookie
  // Rated 6 Ω: the generator's driver (Re ≈ 5.9 Ω) passes the IEC 60268-5 80 % rule only at 6 Ω or less (see recordings.test.ts).
  product = await makeProduct(unique('P'), 6)
  const station = await makeStation()
  await releaseTestMask(product.id, MASK_LIMITS)
  const tech = { cookie: cookies.technician! }
  const upload = async (unit: string, seed: number, defect: Defect) => {
    const up = await postRecording(
      host, tech,
      { serial: serials[unit]!, product: product.code, lot: lotCode, station: station.id, ambientC: 22 },
      { bytes: generateRecording({ seed, defect }), name: `${unit}-${seed}.wav` },
    )
    expect(up.status).toBe(202)
    return up.body.id
  }
  const firstIds: Record<string, number> = {}
  // Uploaded one after another, so production order (upload time) is the plan's order.
  for (const u of PLAN) {
    serials[u.name] = unique(u.name)
    firstIds[u.name] = await upload(u.name, u.tests[0]!.seed, u.tests[0]!.defect)
  }
  const retestId = await upload(RETEST.unit, RETEST.seed, RETEST.defect)
  for (const u of PLAN) firstViews[u.name] = await waitFinished(host, tech, firstIds[u.name]!)
  const returnId = await upload(RETURN_TEST.unit, RETURN_TEST.seed, RETURN_TEST.defect)
  await testDb()('recordings').where({ id: returnId }).update({ is_return_test: true, purpose: 'return_test' })
  const retest = await waitFinished(host, tech, retestId)
  expect((await waitFinished(host, tech, returnId)).verdict).toBe('fail')
  // Preconditions of the known answers: the generator's defect fails polarity and nothing else; good ones pass.
  for (const u of PLAN) {
    const v = firstViews[u.name]!
    expect(v.status).toBe('done')
    expect({ unit: u.name, verdict: v.verdict, failed: v.checks.filter((c) => !c.pass).map((c) => c.name) }).toEqual({
      unit: u.name,
      verdict: u.tests[0]!.defect === 'none' ? 'pass' : 'fail',
      failed: u.tests[0]!.defect === 'none' ? [] : ['polarity'],
    })
  }
  expect(retest.verdict).toBe('pass')
}, 120_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

/** Sample mean and standard deviation (n − 1), written out here to check the server's. */
function meanSd(xs: number[]) {
  const mean = xs.reduce((s, x) => s + x, 0) / xs.length
  const sd = Math.sqrt(xs.reduce((s, x) => s + (x - mean) ** 2, 0) / (xs.length - 1))
  return { mean, sd }
}

describe('lot report JSON', () => {
  let report: LotReport
  beforeAll(async () => {
    const res = await get(`/api/lots/${lotCode}`, 'quality')
    expect(res.status).toBe(200)
    report = (await res.json()) as LotReport
  })

  it('counts units, first-pass yield, final yield and retest rate by hand', () => {
    expect(report.lot).toMatchObject({ code: lotCode, productCode: product.code, closedAt: null })
    expect(report.maskVersion).toBe(1)
    expect(report.summary).toMatchObject({ unitsTested: 6, unitsJudged: 6, unitsNeverJudged: 0, firstPassUnits: 4, finalPassUnits: 5, retestedUnits: 1 })
    expect(report.summary.firstPassYield).toBeCloseTo(4 / 6, 12)
    expect(report.summary.finalYield).toBeCloseTo(5 / 6, 12)
    expect(report.summary.retestRate).toBeCloseTo(1 / 6, 12)
  })

  it('puts polarity in the Pareto with its likely cause (trade knowledge seeded by the migration)', () => {
    expect(report.pareto.any).toEqual({ units: 2, fraction: 2 / 6 })
    expect(report.pareto.rows).toHaveLength(1)
    expect(report.pareto.rows[0]).toMatchObject({ check: 'polarity', label: 'Polarity', units: 2, fraction: 1, cumulativeFraction: 1, unitFraction: 2 / 6 })
    expect(report.pareto.rows[0]!.likelyCauses).toEqual([{ failureClass: 'polarity', causes: ['Leads swapped'] }])
    expect(report.causesNote).toMatch(/trade knowledge/)
  })

  it("gives Fs mean, sd, Cp and Cpk of each unit's first result against the mask (NIST/SEMATECH e-Handbook 6.1.6)", () => {
    const fs = report.distributions.find((d) => d.figure === 'fsHz')!
    const xs = PLAN.map((u) => firstViews[u.name]!.parameters!.fsHz!)
    const { mean, sd } = meanSd(xs)
    expect(fs).toMatchObject({ n: 6, lsl: 20, usl: 80, unit: 'Hz' })
    expect(fs.mean).toBeCloseTo(mean, 9)
    expect(fs.sd).toBeCloseTo(sd, 9)
    // Cp = (USL − LSL) / 6σ; Cpk = min((USL − μ) / 3σ, (μ − LSL) / 3σ).
    expect(fs.cp).toBeCloseTo((80 - 20) / (6 * sd), 6)
    expect(fs.cpk).toBeCloseTo(Math.min((80 - mean) / (3 * sd), (mean - 20) / (3 * sd)), 6)
    expect(fs.histogram.counts.reduce((s, c) => s + c, 0)).toBe(6)
    // The limits are included in the histogram's range, so the chart can draw them.
    expect(fs.histogram.edges[0]).toBeLessThanOrEqual(20)
    expect(fs.histogram.edges.at(-1)).toBeGreaterThanOrEqual(80)
    // Qts has no limit in this mask: no capability indices.
    expect(report.distributions.find((d) => d.figure === 'qts')).toMatchObject({ n: 6, lsl: null, usl: null, cp: null, cpk: null })
  })

  it('draws no drift chart for 6 units without golden units, and says why', () => {
    expect(report.drift).toEqual([])
    expect(report.driftNotes).toHaveLength(2)
    expect(report.driftNotes[0]).toMatch(/^Fs: no control chart yet/)
  })

  it('answers 404 for an unknown lot', async () => {
    const res = await get(`/api/lots/${unique('NOPE')}`, 'quality')
    expect(res.status).toBe(404)
    expect(((await res.json()) as { data: { code: string } }).data.code).toBe('unknown_lot')
  })
})

describe('lot list and dashboard', () => {
  it('lists the open lot of the product with its yields', async () => {
    const res = await get(`/api/lots?product=${product.code}&open=true`, 'support')
    expect(res.status).toBe(200)
    const lots = (await res.json()) as LotSummary[]
    expect(lots).toHaveLength(1)
    expect(lots[0]).toMatchObject({ code: lotCode, productCode: product.code, unitsTested: 6, closedAt: null })
    expect(lots[0]!.firstPassYield).toBeCloseTo(4 / 6, 12)
    expect(lots[0]!.finalYield).toBeCloseTo(5 / 6, 12)
    expect((await get(`/api/lots?open=maybe`, 'quality')).status).toBe(400)
  })

  it("shows today's yield per line and product, and the open lot", async () => {
    const day = new Date().toISOString().slice(0, 10)
    const res = await get(`/api/dashboard?day=${day}`, 'quality')
    expect(res.status).toBe(200)
    const dash = (await res.json()) as DashboardView
    // Each unit counted once by its latest judged result of the day: B1's retest passed, B2 failed.
    expect(dash.byLineProduct.find((r) => r.productCode === product.code)).toEqual({ line: 'Test line', productCode: product.code, unitsTested: 6, passed: 5, failed: 1, yield: 5 / 6 })
    expect(dash.openLots.map((l) => l.code)).toContain(lotCode)
    // Alerts come from the alert rules' table: an open one for this lot is listed with its product and lot codes.
    const db = testDb()
    const lot = await db('lots').where({ code: lotCode }).first('id')
    await db('alerts')
      .insert({ product_id: product.id, lot_id: lot.id, kind: 'drift', episode: 1, message: 'test alert', mailed_at: db.fn.now() })
      .onConflict(db.raw('(product_id, coalesce(lot_id, 0), kind) WHERE closed_at IS NULL'))
      .ignore()
    const withAlert = (await (await get(`/api/dashboard?day=${day}`, 'quality')).json()) as DashboardView
    expect(withAlert.alerts.filter((a) => a.lotCode === lotCode && a.kind === 'drift')).toEqual([
      expect.objectContaining({ productCode: product.code, lotCode, kind: 'drift', closedAt: null }),
    ])
    expect((await get('/api/dashboard', 'technician')).status).toBe(403)
  })
})

describe('exports', () => {
  it('exports one CSV row per unit, as an attachment', async () => {
    const res = await get(`/api/lots/${lotCode}/export.csv`, 'quality')
    expect(res.status).toBe(200)
    expect(res.headers.get('content-disposition')).toMatch(/^attachment; filename="lot-.*\.csv"$/)
    expect(res.headers.get('content-type')).toMatch(/^text\/csv/)
    const parsed = Papa.parse<Record<string, string>>(await res.text(), { header: true, skipEmptyLines: true })
    expect(parsed.errors).toEqual([])
    expect(parsed.data.map((r) => r.serial)).toEqual(PLAN.map((u) => serials[u.name]))
    const row = (u: string) => parsed.data.find((r) => r.serial === serials[u])!
    expect(row('B1')).toMatchObject({ product: product.code, lot: lotCode, tests: '2', first_verdict: 'fail', final_verdict: 'pass', failed_checks: '' })
    expect(row('B2')).toMatchObject({ tests: '1', first_verdict: 'fail', final_verdict: 'fail', failed_checks: 'polarity' })
    expect(row('G1')).toMatchObject({ tests: '1', first_verdict: 'pass', final_verdict: 'pass' })
    // G4's failed return test is not a production test.
    expect(row('G4')).toMatchObject({ tests: '1', first_verdict: 'pass', final_verdict: 'pass', failed_checks: '' })
    expect(Number(row('G1').fs_hz)).toBeCloseTo(firstViews.G1!.parameters!.fsHz!, 9)
  })

  it(`renders the PDF report: ${LOT_REPORT_PAGES} pages with the lot code and the yields`, async () => {
    const res = await get(`/api/lots/${lotCode}/report.pdf`, 'engineer')
    expect(res.status).toBe(200)
    expect(res.headers.get('content-type')).toBe('application/pdf')
    expect(res.headers.get('content-disposition')).toMatch(/^attachment; filename="lot-.*\.pdf"$/)
    const { total, text } = await new PDFParse({ data: Buffer.from(await res.arrayBuffer()) }).getText()
    expect(total).toBe(3)
    expect(text).toContain(`Lot ${lotCode}`)
    expect(text).toContain('66.7 %') // first-pass yield 4/6
    expect(text).toContain('83.3 %') // final yield 5/6
    expect(text).toContain('16.7 %') // retest rate 1/6
    expect(text).toContain('Leads swapped')
    expect(text).toMatch(/generated \d{4}-\d\d-\d\dT/)
  })
})

describe('who may see and export', () => {
  it.each([
    ['technician', `/api/lots/${lotCode}`, 403],
    ['technician', `/api/lots/${lotCode}/export.csv`, 403],
    ['technician', `/api/lots/${lotCode}/report.pdf`, 403],
    ['support', `/api/lots/${lotCode}`, 200],
    ['support', `/api/lots/${lotCode}/export.csv`, 403],
    ['support', `/api/lots/${lotCode}/report.pdf`, 403],
    ['engineer', `/api/lots/${lotCode}/export.csv`, 200],
  ])('%s GET %s → %i', async (role, path, status) => {
    expect((await get(path, role)).status).toBe(status)
  })

  it('answers 401 without a session', async () => {
    expect((await fetch(new URL(`/api/lots/${lotCode}`, host))).status).toBe(401)
  })
})

describe('likely causes', () => {
  const put = (role: string, failureClass: string, body: unknown) =>
    fetch(new URL(`/api/causes/${failureClass}`, host), { method: 'PUT', headers: { cookie: cookies[role]!, 'content-type': 'application/json' }, body: JSON.stringify(body) })

  it('lists the seeded classes to any signed-in role', async () => {
    const res = await get('/api/causes', 'technician')
    expect(res.status).toBe(200)
    const causes = (await res.json()) as LikelyCause[]
    expect(causes.map((c) => c.failureClass).sort()).toEqual(expect.arrayContaining(SEEDED_CAUSES.map((c) => c.failureClass)))
    expect(causes.find((c) => c.failureClass === 'fsHz:high')!.causes).toEqual(['Stiff suspension parts (spider, surround)'])
  })

  it('lets an engineer edit a class (who and when recorded), and the lot report shows it; quality gets 403', async () => {
    expect((await put('quality', 'polarity', { causes: ['x'] })).status).toBe(403)
    const before = Date.now()
    const res = await put('engineer', 'polarity', { causes: ['Leads swapped', 'Terminal wires crossed at the tab'] })
    expect(res.status).toBe(200)
    const saved = (await res.json()) as LikelyCause
    expect(saved).toMatchObject({ failureClass: 'polarity', label: 'Inverted polarity', updatedBy: 'Demo Engineer', causes: ['Leads swapped', 'Terminal wires crossed at the tab'] })
    expect(Date.parse(saved.updatedAt)).toBeGreaterThanOrEqual(before - 5_000)
    const report = (await (await get(`/api/lots/${lotCode}`, 'quality')).json()) as LotReport
    expect(report.pareto.rows[0]!.likelyCauses[0]!.causes).toContain('Terminal wires crossed at the tab')
    expect((await put('engineer', 'polarity', { causes: 'Leads swapped' })).status).toBe(400)
    expect((await put('engineer', 'bad class!', { causes: [] })).status).toBe(400)
    // Put the seeded text back for other files of the same run.
    expect((await put('engineer', 'polarity', { causes: ['Leads swapped'] })).status).toBe(200)
  })
})

describe('drift with golden units', () => {
  /** The lot report takes I-MR limits from the active mask's golden units once it has at least 5 (MIN_GOLDEN_FOR_BASELINE). */
  const GOLDEN = ['G1', 'G2', 'G3', 'G4', 'B2']

  it('charts Fs and Re over production order with limits from the golden units (Montgomery: x̄ ± 3·MR̄/d2, d2 = 1.128)', async () => {
    const db = testDb()
    // A released mask's golden units cannot change: a new version, golden units recorded while it is a draft (as the mask builder does).
    const draft = await createMaskDraft(db, { productId: product.id, name: 'with golden units', limits: MASK_LIMITS, createdBy: null })
    for (const name of GOLDEN) {
      const unit = await db('units').where({ serial: serials[name] }).first('id')
      await db('mask_golden').insert({ mask_id: draft, unit_id: unit.id, recording_id: firstViews[name]!.id, serial: serials[name] })
    }
    await releaseMask(db, draft, { by: null, comment: 'golden units for the drift test' })
    const report = (await (await get(`/api/lots/${lotCode}`, 'engineer')).json()) as LotReport
    expect(report.maskVersion).toBe(2)
    expect(report.drift.map((c) => c.figure)).toEqual(['fsHz', 're20Ohm'])
    expect(report.driftNotes).toEqual([])
    const fs = report.drift[0]!
    expect(fs.baseline).toBe('golden')
    // Production order: each unit's first production result, in upload order.
    expect(fs.points.map((p) => p.serial)).toEqual(PLAN.map((u) => serials[u.name]))
    expect(fs.points.map((p) => p.value)).toEqual(PLAN.map((u) => firstViews[u.name]!.parameters!.fsHz))
    // Golden values in serial order (the order the limits are computed in), then the I-MR limits by hand.
    const golden = GOLDEN.map((n) => ({ serial: serials[n]!, fs: firstViews[n]!.parameters!.fsHz! })).sort((a, b) => (a.serial < b.serial ? -1 : 1)).map((g) => g.fs)
    const centre = golden.reduce((s, v) => s + v, 0) / golden.length
    const mrBar = golden.slice(1).reduce((s, v, i) => s + Math.abs(v - golden[i]!), 0) / (golden.length - 1)
    expect(fs.centre).toBeCloseTo(centre, 9)
    expect(fs.mrBar).toBeCloseTo(mrBar, 9)
    expect(fs.sigma).toBeCloseTo(mrBar / 1.128, 9)
    expect(fs.ucl).toBeCloseTo(centre + (3 * mrBar) / 1.128, 9)
    expect(fs.lcl).toBeCloseTo(centre - (3 * mrBar) / 1.128, 9)
    // Every signal names a unit of the lot and has a warning for its rule.
    for (const sig of fs.signals) expect(fs.points[sig.index]!.serial).toBe(sig.serial)
    expect(fs.warnings.length).toBe(new Set(fs.signals.map((s) => s.rule)).size)
  })
})
