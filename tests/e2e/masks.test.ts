import { mean, sampleStandardDeviation } from 'simple-statistics'
import Papa from 'papaparse'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { twoSidedToleranceFactor } from '../../server/stats/tolerance'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { MaskPreview, MaskView, RecordingView } from '../../shared/types/api'
import type { UnitView } from '../../shared/types/units'
import { signIn, useTestServer } from '../support/app'
import { jsonApi } from '../support/api'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const host = await useTestServer()
let worker: RunningWorker
let eng: { cookie: string }
let tech: { cookie: string }
let product: { id: number; code: string }
let station: { id: number; token: string }
const golden: RecordingView[] = []

const api = jsonApi(host, () => eng)

async function testUnit(seed: number, serial = unique('MU')): Promise<RecordingView> {
  const up = await postRecording(host, tech, { serial, product: product.code, station: station.id }, { bytes: generateRecording({ seed }), name: `${seed}.wav` })
  expect(up.status).toBe(202)
  return waitFinished(host, tech, up.body.id)
}

/** Five new units of a product measured from generator seeds firstSeed…firstSeed + 4; their serials. */
async function measureFive(code: string, firstSeed: number): Promise<string[]> {
  const serials: string[] = []
  for (let i = 0; i < 5; i++) {
    const serial = unique('MF')
    const up = await postRecording(host, tech, { serial, product: code, station: station.id }, { bytes: generateRecording({ seed: firstSeed + i }), name: `${firstSeed + i}.wav` })
    await waitFinished(host, tech, up.body.id)
    serials.push(serial)
  }
  return serials
}

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  eng = { cookie: (await signIn(host, demoEmail('engineer'), DEMO_PASSWORD)).cookie }
  tech = { cookie: (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie }
  product = await makeProduct(unique('P'), 6)
  station = await makeStation()
  for (let i = 0; i < 8; i++) golden.push(await testUnit(400 + i))
}, 120_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

describe('masks are for engineers', () => {
  it.each(['technician', 'quality', 'support'] as const)('answer 403 to a %s on every route', async (role) => {
    const who = { cookie: (await signIn(host, demoEmail(role), DEMO_PASSWORD)).cookie }
    const answers = await Promise.all([
      api('GET', '/api/masks', undefined, who),
      api('GET', `/api/masks/candidates?product=${product.code}`, undefined, who),
      api('POST', '/api/masks', { product: product.code, goldenSerials: golden.map((g) => g.serial) }, who),
      api('GET', '/api/masks/1', undefined, who),
      api('PATCH', '/api/masks/1', { name: 'x' }, who),
      api('GET', '/api/masks/1/preview', undefined, who),
      api('POST', '/api/masks/1/release', { comment: 'because' }, who),
      api('POST', '/api/masks/1/retire', {}, who),
    ])
    expect(answers.map((a) => a.status)).toEqual(Array(answers.length).fill(403))
  })
})

describe('the voice-coil cross-check', () => {
  it('warns when the golden units disagree with the Re expected from the coil description', async () => {
    const code = unique('COIL')
    // 20 m of AWG 31 copper: about 8.6 Ω at 20 °C (ASTM B258 diameter, IEC 60028 resistivity), far from the test driver's 5.9 Ω.
    const created = await api<{ expectedRe20Ohm: number }>('POST', '/api/products', { code, name: 'Coil check', ratedImpedanceOhm: 6, coil: { awg: 31, lengthM: 20, layers: 4 } })
    expect(created.status).toBe(201)
    expect(created.body.expectedRe20Ohm).toBeGreaterThan(8)
    const serials = await measureFive(code, 450)
    const mask = await api<MaskView>('POST', '/api/masks', { product: code, goldenSerials: serials })
    expect(mask.status).toBe(201)
    expect(mask.body.expectedRe20Ohm).toBeCloseTo(created.body.expectedRe20Ohm, 6)
    expect(mask.body.reWarning).toMatch(/below the \d+\.\d+ Ω expected from the voice-coil description/)
  })
})

describe('a mask from golden units through its life', () => {
  let v1: MaskView
  let olderDraftId = 0
  let unjudged: RecordingView

  it('lists the measured units as candidates', async () => {
    const { status, body } = await api<{ serial: string; fsHz: number }[]>('GET', `/api/masks/candidates?product=${product.code}`)
    expect(status).toBe(200)
    expect(body.map((c) => c.serial).sort()).toEqual(golden.map((g) => g.serial).sort())
    expect(body.every((c) => c.fsHz > 0)).toBe(true)
  })

  it.each([
    ['fewer than 5 golden units', () => ({ product: product.code, goldenSerials: golden.slice(0, 4).map((g) => g.serial) }), 400, 'invalid_input'],
    ['a unit never measured', () => ({ product: product.code, goldenSerials: [...golden.slice(0, 5).map((g) => g.serial), 'NEVER-SEEN-1'] }), 422, 'golden_not_measured'],
    ['an unknown product', () => ({ product: 'NO-SUCH', goldenSerials: golden.slice(0, 5).map((g) => g.serial) }), 404, 'product_not_found'],
  ])('refuses %s', async (_l, body, status, code) => {
    const res = await api('POST', '/api/masks', body())
    expect(res.status).toBe(status)
    expect(res.body.data?.code).toBe(code)
  })

  it('proposes a draft whose golden statistics agree with simple-statistics', async () => {
    const res = await api<MaskView>('POST', '/api/masks', { product: product.code, goldenSerials: golden.map((g) => g.serial), k: 3, floorDb: 1.5 })
    expect(res.status).toBe(201)
    v1 = res.body
    expect(v1).toMatchObject({ product: product.code, version: 1, status: 'draft', goldenCount: 8, expectedRe20Ohm: null, reWarning: null })
    expect(v1.curve?.freqHz.length).toBeGreaterThan(10)
    // General-purpose reference library (simple-statistics) on the same golden Fs values.
    const fs = golden.map((g) => g.parameters!.fsHz!)
    expect(v1.golden.figures.fsHz!.mean).toBeCloseTo(mean(fs), 9)
    expect(v1.golden.figures.fsHz!.sd).toBeCloseTo(sampleStandardDeviation(fs), 9)
    // mean ± max(k·σ, floor) with the default Fs floor of 10 % of the mean (shared/utils/mask.ts), stored to 5 significant digits.
    const half = Math.max(3 * sampleStandardDeviation(fs), 0.1 * mean(fs))
    expect(v1.scalars.fsHz!.low).toBeCloseTo(mean(fs) - half, 2)
    expect(v1.scalars.fsHz!.high).toBeCloseTo(mean(fs) + half, 2)
  })

  it('takes separate upper and lower sides and marked regions for the response band', async () => {
    const base = { product: product.code, goldenSerials: golden.map((g) => g.serial), k: 3, floorDb: 1.5 }
    const plain = (await api<MaskView>('POST', '/api/masks', base)).body
    const shaped = await api<MaskView>('POST', '/api/masks', { ...base, upper: { floorDb: 4 }, regions: [{ fromHz: 2000, toHz: 5000, lowerDb: 2 }], impedanceCurve: true, thdBandHz: [300, 3000] })
    expect(shaped.status).toBe(201)
    expect(shaped.body.limits.thdBandHz).toEqual([300, 3000])
    expect(plain.limits.thdBandHz).toBeNull()
    olderDraftId = plain.id
    const at = (m: MaskView, f: number) => m.curve!.freqHz.findIndex((x) => x >= f)
    const i1k = at(plain, 1000)
    const i3k = at(plain, 3000)
    // Above: at least the 4 dB floor; below: unchanged at 1 kHz, 2 dB wider inside the marked region.
    expect(shaped.body.curve!.high[i1k]! - plain.golden.meanSplDb![plain.golden.freqHz.findIndex((x) => x >= plain.curve!.freqHz[i1k]!)]!).toBeGreaterThanOrEqual(4 - 1e-3)
    expect(shaped.body.curve!.low[i1k]).toBeCloseTo(plain.curve!.low[i1k]!, 3)
    expect(plain.curve!.low[i3k]! - shaped.body.curve!.low[i3k]!).toBeCloseTo(2, 3)
    expect(shaped.body.limits.curves.impedanceOhm?.freqHz.length).toBeGreaterThan(10)
    expect(plain.limits.curves.impedanceOhm).toBeUndefined()
    // Drafts nobody released stay drafts (they do not block the versions below).
    expect([plain.status, shaped.body.status]).toEqual(['draft', 'draft'])
  })

  it('edits the draft; previews it with no active mask', async () => {
    const limits = { ...v1.limits, scalars: { ...v1.limits.scalars, fsHz: { low: 10, high: 200 } } }
    const res = await api<MaskView>('PATCH', `/api/masks/${v1.id}`, { limits, name: 'wide Fs' })
    expect(res.status).toBe(200)
    expect(res.body.scalars.fsHz).toEqual({ low: 10, high: 200 })
    expect(res.body.name).toBe('wide Fs')
    v1 = res.body
    const preview = await api<MaskPreview>('GET', `/api/masks/${v1.id}/preview?last=100`)
    expect(preview.status).toBe(200)
    expect(preview.body.active).toBeNull()
    expect(preview.body.considered).toBe(8)
    expect(preview.body.draft).toMatchObject({ pass: 8, fail: 0, yieldPct: 100 })
  })

  it('needs a comment to release; releasing judges results no mask had judged and writes the audit log', async () => {
    unjudged = await testUnit(420)
    expect(unjudged.verdict).toBeNull()
    expect((await api('POST', `/api/masks/${v1.id}/release`, { comment: '' })).status).toBe(400)
    const res = await api<{ id: number; version: number; status: string; judgedUnjudged: number }>('POST', `/api/masks/${v1.id}/release`, { comment: 'first mask of this product' })
    expect(res.status).toBe(200)
    expect(res.body).toMatchObject({ id: v1.id, version: 1, status: 'released', judgedUnjudged: 9 })
    const after = (await (await fetch(new URL(`/api/recordings/${unjudged.id}`, host), { headers: tech })).json()) as RecordingView
    expect(after).toMatchObject({ verdict: 'pass', maskVersion: 1 })
    const audit = await testDb()('audit_log').where({ entity: 'mask', entity_id: String(v1.id), action: 'mask.release' }).first()
    expect(audit.comment).toBe('first mask of this product')
    expect(Number(audit.user_id)).toBeGreaterThan(0)
    // A new unit is judged by v1 at once.
    expect(await testUnit(421)).toMatchObject({ verdict: 'pass', maskVersion: 1 })
  })

  it('keeps a released mask immutable: 409 through the API, refused by the database too', async () => {
    const patch = await api('PATCH', `/api/masks/${v1.id}`, { name: 'changed' })
    expect(patch.status).toBe(409)
    expect(patch.body.data?.code).toBe('mask_not_draft')
    expect((await api('POST', `/api/masks/${v1.id}/release`, { comment: 'again' })).status).toBe(409)
    await expect(testDb()('masks').where({ id: v1.id }).update({ limits: JSON.stringify({ scalars: {} }) })).rejects.toThrow(/cannot change/)
    await expect(testDb()('audit_log').where({ entity_id: String(v1.id) }).del()).rejects.toThrow(/append-only/)
  })

  it('previews a tighter v2 against v1: the units that would change and the check that causes it', async () => {
    const res = await api<MaskView>('POST', '/api/masks', { product: product.code, goldenSerials: golden.map((g) => g.serial) })
    const v2 = res.body.version
    expect(v2).toBeGreaterThan(1)
    const fsValues = golden.map((g) => g.parameters!.fsHz!).sort((a, b) => a - b)
    // An Fs window that leaves out the lowest golden unit.
    const tight = { ...res.body.limits, scalars: { ...res.body.limits.scalars, fsHz: { low: (fsValues[0]! + fsValues[1]!) / 2, high: 200 } } }
    expect((await api('PATCH', `/api/masks/${res.body.id}`, { limits: tight })).status).toBe(200)
    const preview = (await api<MaskPreview>('GET', `/api/masks/${res.body.id}/preview`)).body
    expect(preview.active).toMatchObject({ maskId: v1.id, version: 1, fail: 0 })
    expect(preview.changedTotal).toBeGreaterThanOrEqual(1)
    expect(preview.changed[0]).toMatchObject({ from: 'pass', to: 'fail', checks: ['fsHz'] })
    expect(preview.byCheck.find((c) => c.check === 'fsHz')?.newFails).toBe(preview.changedTotal)
    expect(preview.draft.fail).toBe(preview.changedTotal)

    // The Fs cut rejects a golden unit: the release asks twice, with the expected false-reject share.
    const asked = await api('POST', `/api/masks/${res.body.id}/release`, { comment: 'tighter Fs after spider change' })
    expect([asked.status, asked.body.data?.code]).toEqual([409, 'false_reject_unconfirmed'])
    const released = await api('POST', `/api/masks/${res.body.id}/release`, { comment: 'tighter Fs after spider change', confirmFalseReject: true })
    expect(released.status).toBe(200)
    const list = (await api<{ version: number; status: string }[]>('GET', `/api/masks?product=${product.code}`)).body
    expect(list.filter((m) => m.status !== 'draft').map((m) => [m.version, m.status])).toEqual([[v2, 'released'], [1, 'retired']])
    expect(list.map((m) => m.version)).toEqual([...list.map((m) => m.version)].sort((a, b) => b - a))
    // History is not rewritten: the unit judged by v1 keeps its verdict and mask version.
    const old = (await (await fetch(new URL(`/api/recordings/${unjudged.id}`, host), { headers: tech })).json()) as RecordingView
    expect(old).toMatchObject({ verdict: 'pass', maskVersion: 1 })
    // The unit page shows, beside that verdict, what the current mask says of the same result.
    const lowest = golden.reduce((a, b) => (a.parameters!.fsHz! < b.parameters!.fsHz! ? a : b))
    const unit = (await (await fetch(new URL(`/api/units/${lowest.serial}`, host), { headers: tech })).json()) as UnitView
    expect(unit.recordings[0]).toMatchObject({ verdict: 'pass', maskVersion: 1 })
    expect(unit.currentMask).toEqual({ version: v2, results: [{ recordingId: lowest.id, verdict: 'fail', failedChecks: ['fsHz'] }] })

    // A draft older than the active version cannot replace it.
    const older = await api('POST', `/api/masks/${olderDraftId}/release`, { comment: 'the older proposal after all' })
    expect(older.status).toBe(409)
    expect(older.body.data?.code).toBe('mask_older_than_active')
    // Only a released mask can be retired.
    const retireDraft = await api('POST', `/api/masks/${olderDraftId}/retire`, {})
    expect(retireDraft.status).toBe(409)
    expect(retireDraft.body.data?.code).toBe('mask_not_released')

    // Retiring leaves the product without an active mask: new results wait unjudged.
    const retired = await api('POST', `/api/masks/${res.body.id}/retire`, { comment: 'line stopped' })
    expect(retired.status).toBe(200)
    expect(await testUnit(422)).toMatchObject({ status: 'done', verdict: null })
    expect((await api('POST', `/api/masks/${res.body.id}/retire`, {})).status).toBe(409)
    const patchRetired = await api('PATCH', `/api/masks/${res.body.id}`, { name: 'x' })
    expect(patchRetired.status).toBe(409)
    expect(patchRetired.body.data?.code).toBe('mask_not_draft')
  })
})

describe('statistical proposals, their estimate and the release gate', () => {
  const serials = () => golden.map((g) => g.serial)

  it('proposes tolerance intervals by default and says for each limit which rule set it, with n and k', async () => {
    const res = await api<MaskView>('POST', '/api/masks', { product: product.code, goldenSerials: serials() })
    expect(res.status).toBe(201)
    const p = res.body.proposal!
    expect(p).toMatchObject({ coverage: 0.99, confidence: 0.95, fixedK: null, goldenUnits: 8 })
    expect(p.coveragePerLimit).toBeCloseTo(1 - 0.01 / p.limitCount, 12)
    // Two-sided k for n = 8 at the per-limit coverage (Howe, e-Handbook 7.2.6.3; checked against the
    // handbook and jStat in tests/unit/limits/tolerance.test.ts).
    const fs = p.scalars.fsHz!
    expect(fs.n).toBe(8)
    expect(fs.k).toBeCloseTo(twoSidedToleranceFactor(8, p.coveragePerLimit, 0.95), 3)
    const values = golden.map((g) => g.parameters!.fsHz!)
    const half = Math.max(fs.k * sampleStandardDeviation(values), 0.1 * mean(values))
    expect(fs.rule).toBe(fs.k * sampleStandardDeviation(values) >= 0.1 * mean(values) ? 'interval' : 'floor')
    expect(res.body.scalars.fsHz!.high).toBeCloseTo(mean(values) + half, 2)
    // New masks decide by the measured value; the estimate covers every limit.
    expect(res.body.limits.decisionRule).toBe('simple')
    expect(res.body.estimate.overall).toBeGreaterThanOrEqual(0)
    expect(res.body.estimate.overall).toBeLessThan(1)
    expect(Object.keys(res.body.estimate.byCheck)).toEqual(expect.arrayContaining(['fsHz', 're20Ohm', 'splDb']))
    expect(p.warnings.map((w) => w.code)).not.toContain('few_golden_units')
  })

  it('warns with fewer than 8 golden units, and uses the product\'s own floors', async () => {
    const floors = await api('PATCH', `/api/products/${product.code}`, { limitFloors: { fsHz: 40 } })
    expect(floors.status).toBe(200)
    const res = await api<MaskView>('POST', '/api/masks', { product: product.code, goldenSerials: serials().slice(0, 6), decisionRule: 'guarded_retest' })
    expect(res.status).toBe(201)
    expect(res.body.proposal!.warnings.map((w) => w.code)).toContain('few_golden_units')
    // A 40 % floor is wider than any interval from these units: the floor sets Fs.
    const fsMean = mean(golden.slice(0, 6).map((g) => g.parameters!.fsHz!))
    expect(res.body.proposal!.scalars.fsHz).toMatchObject({ rule: 'floor', n: 6 })
    expect(res.body.scalars.fsHz!.low).toBeCloseTo(0.6 * fsMean, 2)
    expect(res.body.limits.decisionRule).toBe('guarded_retest')
    expect((await api('PATCH', `/api/products/${product.code}`, { limitFloors: {} })).status).toBe(200)
    // Floors are validated like every input.
    const bad = await api('PATCH', `/api/products/${product.code}`, { limitFloors: { fsHz: -1 } })
    expect([bad.status, bad.body.data?.code]).toEqual([400, 'invalid_input'])
  })

  it('exports the limits as CSV with the rule, n, k and estimate of each, audited', async () => {
    const m = (await api<MaskView>('POST', '/api/masks', { product: product.code, goldenSerials: serials() })).body
    const res = await fetch(new URL(`/api/masks/${m.id}/limits.csv`, host), { headers: eng })
    expect(res.status).toBe(200)
    expect(res.headers.get('content-type')).toMatch(/text\/csv/)
    const rows = Papa.parse<Record<string, string>>(await res.text(), { header: true, skipEmptyLines: true }).data
    const fs = rows.find((r) => r.check === 'fsHz')!
    expect(fs).toMatchObject({ product: product.code, decision_rule: 'simple', rule: m.proposal!.scalars.fsHz!.rule, golden_n: '8' })
    expect(Number(fs.low)).toBeCloseTo(m.scalars.fsHz!.low!, 6)
    expect(Number(fs.k)).toBeCloseTo(m.proposal!.scalars.fsHz!.k, 6)
    expect(rows.filter((r) => r.check === 'splDb').length).toBe(m.curve!.freqHz.length)
    const audit = await testDb()('audit_log').where({ action: 'mask.export_csv', entity_id: String(m.id) }).first()
    expect(audit).toBeTruthy()
    const tech403 = await fetch(new URL(`/api/masks/${m.id}/limits.csv`, host), { headers: tech })
    expect(tech403.status).toBe(403)
  })

  it('asks twice before releasing a mask expected to reject more good units than the product allows', async () => {
    const code = unique('GATE')
    expect((await api('POST', '/api/products', { code, name: 'Gate check', ratedImpedanceOhm: 6, falseRejectMaxPct: 0.01 })).status).toBe(201)
    const gateSerials = await measureFive(code, 470)
    // A fixed k = 2 on five units: the golden model expects several per cent of good units to fail.
    const m = (await api<MaskView>('POST', '/api/masks', { product: code, goldenSerials: gateSerials, k: 2 })).body
    expect(m.estimate.overall).toBeGreaterThan(0.0001)
    const first = await api<{ data: { code: string; falseRejectPct: number; thresholdPct: number; basis: string } }>('POST', `/api/masks/${m.id}/release`, { comment: 'first try' })
    expect(first.status).toBe(409)
    expect(first.body.data).toMatchObject({ code: 'false_reject_unconfirmed', thresholdPct: 0.01, basis: 'golden_model' })
    expect(first.body.data.falseRejectPct).toBeCloseTo(100 * m.estimate.overall, 1)
    expect(first.body.message).toMatch(/about 1 good unit in \d+/)
    // Nothing happened: still a draft, nothing audited.
    expect((await api<MaskView>('GET', `/api/masks/${m.id}`)).body.status).toBe('draft')
    expect(await testDb()('audit_log').where({ action: 'mask.release', entity_id: String(m.id) }).first()).toBeUndefined()
    const confirmed = await api('POST', `/api/masks/${m.id}/release`, { comment: 'accepted: first lot, limits reviewed', confirmFalseReject: true })
    expect(confirmed.status).toBe(200)
    const audit = await testDb()('audit_log').where({ action: 'mask.release', entity_id: String(m.id) }).first()
    expect(audit.detail).toMatchObject({ confirmedOverThreshold: true, falseRejectBasis: 'golden_model' })
  })

  it('previews the false-reject share on known-good units and lists newly failing units first', async () => {
    const m = (await api<MaskView>('POST', '/api/masks', { product: product.code, goldenSerials: serials() })).body
    // Re tighter than the golden spread: some known-good units would now fail.
    const re = golden.map((g) => g.parameters!.re20Ohm ?? g.parameters!.reOhm!).sort((a, b) => a - b)
    const limits = { ...m.limits, scalars: { ...m.limits.scalars, re20Ohm: { low: re[2]!, high: 100 } } }
    expect((await api('PATCH', `/api/masks/${m.id}`, { limits })).status).toBe(200)
    const preview = (await api<MaskPreview>('GET', `/api/masks/${m.id}/preview`)).body
    expect(preview.knownGood.units).toBeGreaterThanOrEqual(8)
    expect(preview.knownGood.draftFails).toBeGreaterThanOrEqual(2)
    expect(preview.knownGood.falseRejectPct).toBeCloseTo((100 * preview.knownGood.draftFails) / preview.knownGood.units, 1)
    const ranks = preview.changed.map((c) => (c.to === 'fail' ? 0 : c.from === 'fail' && c.to === 'pass' ? 1 : 2))
    expect(ranks).toEqual([...ranks].sort((a, b) => a - b))
  })
})
