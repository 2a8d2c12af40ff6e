/**
 * Reference units: registered by an engineer from several measurements on a trusted station, with
 * accepted values (mean, spread) and verification limits by a stated rule; measured again they are
 * station checks, which never count in yield, lots or Cpk; registrations never change.
 */
import { mean, sampleStandardDeviation } from 'simple-statistics'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { RecordingView, ReferenceUnitView } from '../../shared/types/api'
import { REPEAT_SD_MULTIPLIER, TOLERANCE_SHARE } from '../../shared/utils/reference-units'
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
const lot = unique('L')
const refSerial = unique('REF')
const measured: RecordingView[] = []

const api = jsonApi(host, () => eng)

async function measure(serial: string, seed: number): Promise<RecordingView> {
  const up = await postRecording(host, tech, { serial, product: product.code, lot, station: station.id }, { bytes: generateRecording({ seed }), name: `${seed}.wav` })
  expect(up.status).toBe(202)
  return waitFinished(host, tech, up.body.id)
}

const lotSummary = async () => (await api<{ summary: { unitsTested: number; unitsJudged: number } }>('GET', `/api/lots/${lot}`)).body.summary

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  eng = { cookie: (await signIn(host, demoEmail('engineer'), DEMO_PASSWORD)).cookie }
  tech = { cookie: (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie }
  product = await makeProduct(unique('P'), 6)
  station = await makeStation()
  // The future reference unit measured three times on the trusted station, and one other unit.
  for (const seed of [610, 611, 612]) measured.push(await measure(refSerial, seed))
  await measure(unique('U'), 613)
}, 120_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

describe('registering a reference unit', () => {
  let ref: ReferenceUnitView

  it('is for engineers; validates the input; needs three measurements on the station', async () => {
    const body = { serial: refSerial, description: 'Check unit A, blue tag', keptAt: 'Line 1 cabinet, shelf 2', station: station.id }
    expect((await api('POST', '/api/reference-units', body, tech)).status).toBe(403)
    const bad = await api('POST', '/api/reference-units', { ...body, description: '', measurements: 2 })
    expect([bad.status, bad.body.data?.code]).toEqual([400, 'invalid_input'])
    const unknown = await api('POST', '/api/reference-units', { ...body, serial: unique('NOPE') })
    expect([unknown.status, unknown.body.data?.code]).toEqual([422, 'unknown_serial'])
    const other = await makeStation()
    const few = await api('POST', '/api/reference-units', { ...body, station: other.id })
    expect([few.status, few.body.data?.code]).toEqual([422, 'reference_not_measured'])
    expect(few.body.message).toMatch(/has 0 finished sweep measurements .* at least 3/)
    expect(await testDb()('reference_units').whereIn('unit_id', testDb()('units').select('id').where({ serial: refSerial })).first()).toBeUndefined()
  })

  it('takes the mean and spread of the measurements as accepted values, and limits by the stated rule', async () => {
    const res = await api<ReferenceUnitView>('POST', '/api/reference-units', { serial: refSerial, description: 'Check unit A, blue tag', keptAt: 'Line 1 cabinet, shelf 2', station: station.id, limits: { qts: { low: 0.2, high: 0.6 } } })
    expect(res.status).toBe(201)
    ref = res.body
    expect(ref).toMatchObject({ serial: refSerial, productCode: product.code, stationId: station.id, retiredAt: null })
    expect(ref.basisRecordingIds.sort()).toEqual(measured.map((m) => m.id).sort())
    // Accepted Fs: the sample mean and SD of the three measurements (simple-statistics as the reference).
    const fs = measured.map((m) => m.parameters!.fsHz!)
    expect(ref.accepted.fsHz!.n).toBe(3)
    expect(ref.accepted.fsHz!.value).toBeCloseTo(mean(fs), 9)
    expect(ref.accepted.fsHz!.sd).toBeCloseTo(sampleStandardDeviation(fs), 9)
    // No mask yet: the tolerance is the product's Fs floor (10 %) either side, and the limit the larger of 3 s and a tenth of it.
    const width = 2 * 0.1 * mean(fs)
    const half = Math.max(REPEAT_SD_MULTIPLIER * sampleStandardDeviation(fs), TOLERANCE_SHARE * width)
    expect(ref.limits.fsHz!.toleranceWidth).toBeCloseTo(width, 9)
    expect(ref.limits.fsHz!.high - ref.accepted.fsHz!.value).toBeCloseTo(half, 9)
    expect(ref.limits.fsHz!.rule).toBe(half === TOLERANCE_SHARE * width ? 'tolerance_share' : 'repeatability')
    // The engineer's own limit stands as given.
    expect(ref.limits.qts).toMatchObject({ low: 0.2, high: 0.6, rule: 'engineer' })
    const audit = await testDb()('audit_log').where({ action: 'reference_unit.register', entity_id: String(ref.id) }).first()
    expect(audit.detail).toMatchObject({ serial: refSerial, measurements: 3 })
    // Every role reads them (the bench must know a reference serial).
    const listed = await api<ReferenceUnitView[]>('GET', `/api/reference-units?product=${product.code}`, undefined, tech)
    expect(listed.body.map((r) => r.serial)).toEqual([refSerial])
  })

  it('refuses a second registration of the unit while the first is in force', async () => {
    const again = await api('POST', '/api/reference-units', { serial: refSerial, description: 'again', keptAt: 'here', station: station.id })
    expect([again.status, again.body.data?.code]).toEqual([409, 'reference_unit_exists'])
  })

  it('records the unit measured again as a station check that never counts in the lot', async () => {
    const before = await lotSummary()
    const check = await measure(refSerial, 614)
    expect(check.purpose).toBe('station_check')
    expect(await lotSummary()).toEqual(before)
    // The unit's latest production result is still its factory test.
    const candidates = (await api<{ serial: string; recordingId: number }[]>('GET', `/api/masks/candidates?product=${product.code}`)).body
    expect(candidates.find((c) => c.serial === refSerial)!.recordingId).toBe(measured.at(-1)!.id)
  })

  it('never changes a registration: retiring is the one change, audited, and it needs a comment', async () => {
    await expect(testDb()('reference_units').where({ id: ref.id }).update({ limits: '{}' })).rejects.toThrow(/cannot change/)
    await expect(testDb()('reference_units').where({ id: ref.id }).del()).rejects.toThrow(/history/)
    expect((await api('POST', `/api/reference-units/${ref.id}/retire`, { comment: '' })).status).toBe(400)
    const retired = await api<ReferenceUnitView>('POST', `/api/reference-units/${ref.id}/retire`, { comment: 'dropped, cone dented' })
    expect(retired.status).toBe(200)
    expect(retired.body).toMatchObject({ retireComment: 'dropped, cone dented' })
    expect(retired.body.retiredAt).not.toBeNull()
    const twice = await api('POST', `/api/reference-units/${ref.id}/retire`, { comment: 'again' })
    expect([twice.status, twice.body.data?.code]).toEqual([409, 'reference_retired'])
    expect((await api('GET', '/api/reference-units/999999')).status).toBe(404)
    // Retired, the unit measured again is a production test once more.
    expect((await measure(refSerial, 615)).purpose).toBe('production')
  })
})
