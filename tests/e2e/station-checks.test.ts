/**
 * Station checks through the real server: a station with a check plan measures production only
 * while its check holds; a due or failed check answers uploads 423 `station_unverified` (station
 * token and bench alike) and stores nothing; the reference unit itself is always taken; an engineer
 * can release a blocked station for a stated time; everything is audited.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEMO_DRIVER, generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { RecordingView, ReferenceUnitView, StationCheckStatus } from '../../shared/types/api'
import { signIn, useTestServer } from '../support/app'
import { jsonApi } from '../support/api'
import { closeTestDb, makeProduct, makeStation, testDb, unique } from '../support/db'
import { postRecording, waitFinished, type Auth } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const host = await useTestServer()
let worker: RunningWorker
let eng: { cookie: string }
let tech: { cookie: string }
let product: { id: number; code: string }
let station: { id: number; token: string }
const refSerial = unique('REF')
let seed = 2500

const api = jsonApi(host, () => eng)

/** Uploads one recording of `serial` through the station's token (or a signed-in technician's bench). */
function upload(serial: string, o: { as?: Auth; fsHz?: number } = {}) {
  const bytes = generateRecording({ seed: seed++, driver: { ...DEMO_DRIVER, fsHz: o.fsHz ?? DEMO_DRIVER.fsHz } })
  return postRecording(host, o.as ?? { token: station.token }, { serial, product: product.code, station: station.id }, { bytes, name: `${seed}.wav` })
}

async function measured(serial: string, o: { as?: Auth; fsHz?: number } = {}): Promise<RecordingView> {
  const up = await upload(serial, o)
  expect(up.status).toBe(202)
  return waitFinished(host, tech, up.body.id)
}

const status = async () => (await api<StationCheckStatus>('GET', `/api/stations/${station.id}/check`, undefined, tech)).body

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  eng = { cookie: (await signIn(host, demoEmail('engineer'), DEMO_PASSWORD)).cookie }
  tech = { cookie: (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie }
  product = await makeProduct(unique('P'), 8)
  station = await makeStation()
  for (let i = 0; i < 3; i++) await measured(refSerial)
  const ref = await api<ReferenceUnitView>('POST', '/api/reference-units', { serial: refSerial, description: 'Check unit', keptAt: 'Cabinet 1', station: station.id })
  expect(ref.status).toBe(201)
}, 120_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

describe('a station with a check plan', () => {
  it('has no plan at first and is never blocked then', async () => {
    expect((await status()).state).toMatchObject({ state: 'no_plan', blocked: false })
    await measured(unique('U'))
  })

  it('takes a plan from engineers only, validated', async () => {
    expect((await api('PUT', `/api/stations/${station.id}/check-plan`, { plan: { everyUnits: 2 } }, tech)).status).toBe(403)
    const bad = await api('PUT', `/api/stations/${station.id}/check-plan`, { plan: { shiftStarts: ['25:00'] } })
    expect([bad.status, bad.body.data?.code]).toEqual([400, 'invalid_input'])
    const set = await api<StationCheckStatus>('PUT', `/api/stations/${station.id}/check-plan`, { plan: { everyUnits: 2, shiftStarts: [], timeZone: 'UTC' } })
    expect(set.status).toBe(200)
    expect(set.body.plan).toEqual({ shiftStarts: [], timeZone: 'UTC', everyHours: null, everyUnits: 2 })
    expect(set.body.state).toMatchObject({ state: 'due', blocked: true })
    expect(await testDb()('audit_log').where({ action: 'station.check_plan', entity_id: String(station.id) }).first()).toBeTruthy()
  })

  it('answers 423 station_unverified while due, through the token and the bench, storing nothing', async () => {
    for (const as of [{ token: station.token }, tech]) {
      const serial = unique('BLK')
      const res = await upload(serial, { as })
      expect([res.status, res.body.data?.code]).toEqual([423, 'station_unverified'])
      expect(res.body.message).toMatch(/blocked since .*has not been checked since its check plan was set.*reference unit/)
      expect(await testDb()('units').where({ serial }).first()).toBeUndefined()
    }
  })

  it('takes the reference unit while blocked; a passed check lets production run until the plan\'s units are done', async () => {
    const check = await measured(refSerial)
    expect(check.purpose).toBe('station_check')
    const s = await status()
    expect(s.checks[0]).toMatchObject({ recordingId: check.id, serial: refSerial, pass: true })
    expect(s.checks[0]!.figures.fsHz).toMatchObject({ pass: true })
    expect(s.state).toMatchObject({ state: 'verified', blocked: false })
    await measured(unique('U'))
    await measured(unique('U'))
    // The second unit after the check made it due again.
    const third = await upload(unique('U'))
    expect([third.status, third.body.data?.code]).toEqual([423, 'station_unverified'])
    expect(third.body.message).toMatch(/measured 2 units since its last check/)
  })

  it('blocks at once on a failed check, naming the figure, and audits it', async () => {
    // The station now reads Fs 10 % high (e.g. a leaking test box): the reference unit shows it.
    const check = await measured(refSerial, { fsHz: DEMO_DRIVER.fsHz * 1.1 })
    const s = await status()
    expect(s.checks[0]).toMatchObject({ recordingId: check.id, pass: false })
    expect(s.checks[0]!.figures.fsHz!.pass).toBe(false)
    expect(s.state).toMatchObject({ state: 'failed', blocked: true, since: s.checks[0]!.checkedAt })
    expect(s.state.reason).toMatch(/failed on .*Fs/)
    const audit = await testDb()('audit_log').where({ action: 'station.check_failed', entity_id: String(station.id) }).first()
    expect(audit.detail).toMatchObject({ recordingId: check.id, failing: expect.arrayContaining(['fsHz']) })
    const res = await upload(unique('U'))
    expect([res.status, (res.body.data as { state?: string } | undefined)?.state]).toEqual([423, 'failed'])
    // The check is history.
    await expect(testDb()('station_checks').where({ recording_id: check.id }).update({ pass: true })).rejects.toThrow(/history/)
  })

  it('lets an engineer release a blocked station for a stated time, with a reason, audited', async () => {
    const body = { comment: 'Fs reads high: test box seal replaced, reference unit at the lab until 14:00', hours: 2 }
    expect((await api('POST', `/api/stations/${station.id}/release`, body, tech)).status).toBe(403)
    expect((await api('POST', `/api/stations/${station.id}/release`, { ...body, hours: 500 })).status).toBe(400)
    expect((await api('POST', `/api/stations/${station.id}/release`, { ...body, comment: '' })).status).toBe(400)
    const released = await api<StationCheckStatus>('POST', `/api/stations/${station.id}/release`, body)
    expect(released.status).toBe(200)
    expect(released.body.state).toMatchObject({ state: 'released', blocked: false })
    expect(released.body.state.reason).toMatch(/Released by .* until .*seal replaced/)
    const until = new Date(released.body.state.nextDueAt!).getTime()
    expect(until - Date.now()).toBeGreaterThan(1.9 * 3_600_000)
    expect(until - Date.now()).toBeLessThanOrEqual(2 * 3_600_000)
    await measured(unique('U'))
    const audit = await testDb()('audit_log').where({ action: 'station.release', entity_id: String(station.id) }).first()
    expect(audit).toMatchObject({ comment: body.comment })
    expect(audit.detail).toMatchObject({ hours: 2, reason: expect.stringMatching(/failed/) })
    // Only a blocked station can be released.
    const again = await api('POST', `/api/stations/${station.id}/release`, body)
    expect([again.status, again.body.data?.code]).toEqual([409, 'station_not_blocked'])
  })

  it('shows the station\'s offset per figure from its checks, warned above a tenth of the tolerance', async () => {
    expect((await api('GET', `/api/reference-units/offsets?product=${product.code}`, undefined, tech)).status).toBe(403)
    const res = await api<{ warnShare: number; offsets: { stationId: number; figure: string; n: number; offset: number; ci: [number, number] | null; warn: boolean }[] }>('GET', `/api/reference-units/offsets?product=${product.code}`)
    expect(res.status).toBe(200)
    const fs = res.body.offsets.find((o) => o.stationId === station.id && o.figure === 'fsHz')!
    // Two checks: one reading as accepted, one with Fs 10 % high: the mean difference is about 5 % of Fs.
    expect(fs.n).toBe(2)
    expect(fs.offset / DEMO_DRIVER.fsHz).toBeGreaterThan(0.03)
    expect(fs.offset / DEMO_DRIVER.fsHz).toBeLessThan(0.07)
    expect(fs.ci![0]).toBeLessThan(fs.offset)
    expect(fs.warn).toBe(true)
    expect((await api('GET', '/api/reference-units/offsets?product=NOPE-NONE')).status).toBe(404)
  })

  it('is never blocked again once its plan is removed', async () => {
    const removed = await api<StationCheckStatus>('PUT', `/api/stations/${station.id}/check-plan`, { plan: null })
    expect(removed.body).toMatchObject({ plan: null, state: { state: 'no_plan', blocked: false } })
    expect((await api('GET', '/api/stations/999999/check')).status).toBe(404)
  })
})
