/**
 * Finding a unit and its factory record: search by full serial, prefix, scanned barcode
 * and a mistyped serial; the record with station, operator and mask version of every test, return
 * tests marked; the test certificate as a PDF and by e-mail, both audited. Seeds 1100–1149.
 */
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { PDFParse } from 'pdf-parse'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { MailboxEntry } from '../../shared/types/mail'
import type { UnitSearchAnswer, UnitView } from '../../shared/types/units'
import { ROLE_LABELS, type Role } from '../../shared/utils/roles'
import { findUnitIdsByPrefix, resolveUnit } from '../../server/repos/units'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const host = await useTestServer()
const mailboxDir = inject('mailboxDir')
const cookies = new Map<Role, string>()
let worker: RunningWorker
let product: { id: number; code: string }
let station: { id: number; token: string }
const lotCode = unique('ULOT')
/** Tested three times: by the station's token (pass), retested by a technician (pass), then a failing return test. */
const serial = unique('UA')
/** Units registered under one prefix, never tested (a unit exists once a station names it with its product). */
const prefix = `${unique('UP')}-`
const prefixed = ['001', '002', '003'].map((n) => `${prefix}${n}`)
const ids: { first: number; retest: number; returnTest: number } = { first: 0, retest: 0, returnTest: 0 }

async function api(path: string, role: Role | null, init: { method?: string; body?: unknown } = {}) {
  if (role && !cookies.has(role)) cookies.set(role, (await signIn(host, demoEmail(role), DEMO_PASSWORD)).cookie)
  return fetch(new URL(path, host), {
    method: init.method ?? 'GET',
    headers: { ...(role ? { cookie: cookies.get(role)! } : {}), ...(init.body ? { 'content-type': 'application/json' } : {}) },
    body: init.body ? JSON.stringify(init.body) : undefined,
  })
}
const search = async (q: string, role: Role = 'support') => {
  const res = await api(`/api/units?q=${encodeURIComponent(q)}`, role)
  return { status: res.status, body: (await res.json()) as UnitSearchAnswer & { data?: { code: string } } }
}

const unitIds = async (serials: string[]) => Promise.all(serials.map(async (s) => Number((await testDb()('units').where({ serial: s }).first('id')).id)))

function mailbox(): MailboxEntry[] {
  try {
    return JSON.parse(readFileSync(join(mailboxDir, 'index.json'), 'utf8')) as MailboxEntry[]
  } catch {
    return []
  }
}

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  // Rated 6 Ω: the generated driver (Re ≈ 5.9 Ω) passes the IEC 60268-5 80 % rule only at 6 Ω or less (see recordings.test.ts).
  product = await makeProduct(unique('P'), 6)
  station = await makeStation(undefined, unique('UnitSt'))
  await releaseTestMask(product.id, { scalars: { fsHz: { low: 20, high: 80 } }, polarityNormal: true, ratedImpedanceRule: true, curves: {} })
  const fields = { serial, product: product.code, lot: lotCode, station: station.id, ambientC: 22 }
  const first = await postRecording(host, { token: station.token }, fields, { bytes: generateRecording({ seed: 1100 }), name: 'first.wav' })
  expect(first.status).toBe(202)
  ids.first = first.body.id
  expect((await waitFinished(host, { token: station.token }, ids.first)).verdict).toBe('pass')
  cookies.set('technician', (await signIn(host, demoEmail('technician'), DEMO_PASSWORD)).cookie)
  const tech = { cookie: cookies.get('technician')! }
  const retest = await postRecording(host, tech, fields, { bytes: generateRecording({ seed: 1101 }), name: 'retest.wav' })
  ids.retest = retest.body.id
  expect((await waitFinished(host, tech, ids.retest)).verdict).toBe('pass')
  const ret = await postRecording(host, tech, fields, { bytes: generateRecording({ seed: 1102, defect: 'inverted_polarity' }), name: 'return.wav' })
  ids.returnTest = ret.body.id
  // Marked as the returns desk marks a return test (test setup only).
  await testDb()('recordings').where({ id: ids.returnTest }).update({ is_return_test: true, purpose: 'return_test' })
  expect((await waitFinished(host, tech, ids.returnTest)).verdict).toBe('fail')
  for (const s of prefixed) await resolveUnit(testDb(), s, product.code, lotCode)
}, 120_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

describe('finding a unit', () => {
  it.each([
    ['the full serial', serial],
    ['the serial in lower case', serial.toLowerCase()],
    ['a scanned barcode with a trailing CR', `${serial}\r`],
    ['a scanned barcode with CR LF and an AIM identifier', `]C0${serial}\r\n`],
  ])('%s is one exact hit with its product, lot and latest production verdict', async (_name, q) => {
    const { status, body } = await search(q)
    expect(status).toBe(200)
    expect(body).toMatchObject({ query: q.replace(/^\]C0/, '').trim(), match: 'exact', more: false, nearest: [] })
    // The failing return test neither changes the verdict nor hides that it was a test.
    expect(body.units).toEqual([{ serial, productCode: product.code, productName: `Test driver ${product.code}`, lotCode, lastTestedAt: expect.any(String), tests: 3, verdict: 'pass' }])
  })

  it('a prefix lists the units starting with it, newest first', async () => {
    const { status, body } = await search(prefix)
    expect(status).toBe(200)
    expect(body.match).toBe('prefix')
    expect(body.units.map((u) => u.serial)).toEqual([...prefixed].reverse())
    expect(body.units.every((u) => u.tests === 0 && u.verdict === null && u.lastTestedAt === null)).toBe(true)
    expect(body.more).toBe(false)
  })

  it('a prefix shared by more units than one index read takes lists the newest of the highest serials', async () => {
    // The same function with a read of 2 rows, as a broad prefix of a million units meets a read of 5 000.
    expect(await findUnitIdsByPrefix(testDb(), prefix.toLowerCase(), 10, 2)).toEqual({ ids: (await unitIds(prefixed.slice(1))).reverse(), more: true })
    expect(await findUnitIdsByPrefix(testDb(), prefix, 2, 3)).toEqual({ ids: (await unitIds(prefixed.slice(1))).reverse(), more: true })
  })

  it('a mistyped serial is never tested here, with the real one nearest', async () => {
    const last = serial.at(-1)!
    const typo = `${serial.slice(0, -1)}${last === 'X' ? 'Y' : 'X'}`
    const { status, body } = await search(typo)
    expect(status).toBe(200)
    expect(body).toMatchObject({ query: typo, match: 'unknown', units: [], more: false })
    expect(body.nearest[0]).toMatchObject({ serial, verdict: 'pass', tests: 3 })
  })

  it('two neighbouring characters swapped still finds the unit', async () => {
    const i = serial.length - 3
    const swapped = serial.slice(0, i) + serial[i + 1] + serial[i] + serial.slice(i + 2)
    expect(swapped).not.toBe(serial)
    const { body } = await search(swapped)
    expect(body.match).toBe('unknown')
    expect(body.nearest.map((u) => u.serial)).toContain(serial)
  })

  it('a serial unlike any other has no nearest match', async () => {
    const { body } = await search('QQQQQQQQQQQQQQQQQQQQ')
    expect(body).toMatchObject({ match: 'unknown', units: [], nearest: [] })
  })

  it.each([['C'], ['CT 7A'], ['']])('refuses %j with 400 invalid_input', async (q) => {
    const { status, body } = await search(q)
    expect(status).toBe(400)
    expect(body.data?.code).toBe('invalid_input')
  })

  it.each([['technician'], ['engineer'], ['quality'], ['support'], ['admin']] as const)('is open to %s', async (role) => {
    expect((await search(serial, role)).status).toBe(200)
  })

  it('answers 401 without a session', async () => {
    expect((await api(`/api/units?q=${serial}`, null)).status).toBe(401)
    expect((await api(`/api/units/${serial}`, null)).status).toBe(401)
  })
})

describe('the factory record', () => {
  let unit: UnitView
  beforeAll(async () => {
    const res = await api(`/api/units/${serial}`, 'support')
    expect(res.status).toBe(200)
    unit = (await res.json()) as UnitView
  })

  it('lists every test newest first with station, operator, mask version, and the return test marked', () => {
    expect(unit).toMatchObject({ serial, lot: { code: lotCode }, verdict: 'pass', latestProductionId: ids.retest })
    const tests = unit.recordings.map((r) => ({ id: r.id, number: r.number, returnTest: r.returnTest, verdict: r.verdict, station: r.stationName, operator: r.operator, maskVersion: r.maskVersion }))
    const stationName = tests[0]!.station
    expect(stationName).toMatch(/^UNITST-/)
    const technician = { kind: 'person', name: `Demo ${ROLE_LABELS.technician}` }
    expect(tests).toEqual([
      { id: ids.returnTest, number: 3, returnTest: true, verdict: 'fail', station: stationName, operator: technician, maskVersion: 1 },
      { id: ids.retest, number: 2, returnTest: false, verdict: 'pass', station: stationName, operator: technician, maskVersion: 1 },
      { id: ids.first, number: 1, returnTest: false, verdict: 'pass', station: stationName, operator: { kind: 'station', name: stationName }, maskVersion: 1 },
    ])
    expect(unit.recordings[2]).toMatchObject({ stationLine: 'Test line', profileVersion: 1, ambientC: 22 })
  })

  it('shows what the current mask says beside each historic verdict', () => {
    expect(unit.currentMask?.version).toBe(1)
    const now = new Map(unit.currentMask!.results.map((r) => [r.recordingId, r]))
    expect(now.get(ids.first)).toMatchObject({ verdict: 'pass', failedChecks: [] })
    expect(now.get(ids.returnTest)).toMatchObject({ verdict: 'fail', failedChecks: ['polarity'] })
  })

  it('finds the record whatever the case of the serial in the address', async () => {
    const res = await api(`/api/units/${serial.toLowerCase()}`, 'technician')
    expect(res.status).toBe(200)
    expect(((await res.json()) as UnitView).serial).toBe(serial)
  })
})

describe('the test certificate', () => {
  const audits = (action: string, entityId: string) => testDb()('audit_log').where({ action, entity: 'unit', entity_id: entityId }).orderBy('id')

  it('is a one-page PDF with the serial and the verdict of the latest production test, and the download is audited', async () => {
    const before = (await audits('certificate.download', serial)).length
    const res = await api(`/api/units/${serial}/certificate.pdf`, 'support')
    expect(res.status).toBe(200)
    expect(res.headers.get('content-type')).toBe('application/pdf')
    expect(res.headers.get('content-disposition')).toBe(`attachment; filename="certificate-${serial}.pdf"`)
    const { total, text } = await new PDFParse({ data: Buffer.from(await res.arrayBuffer()) }).getText()
    expect(total).toBe(1)
    expect(text).toContain(serial)
    expect(text).toContain('PASS')
    expect(text).not.toContain('FAIL') // the failing return test is not what the certificate states
    expect(text).toContain('mask version 1')
    expect(text).toContain(lotCode)
    expect(text).toContain('issued by Conetrail')
    const rows = await audits('certificate.download', serial)
    expect(rows.length).toBe(before + 1)
    expect(rows.at(-1)!.detail).toMatchObject({ recordingId: ids.retest, verdict: 'pass', maskVersion: 1 })
  })

  it.each([
    ['technician', 403],
    ['quality', 200],
    ['engineer', 200],
    ['admin', 200],
  ] as const)('%s → %i', async (role, status) => {
    expect((await api(`/api/units/${serial}/certificate.pdf`, role)).status).toBe(status)
  })

  it('answers 401 without a session, 404 for an unknown serial, 409 for a unit never tested', async () => {
    expect((await api(`/api/units/${serial}/certificate.pdf`, null)).status).toBe(401)
    const unknown = await api('/api/units/NO-SUCH-UNIT-1/certificate.pdf', 'support')
    expect(unknown.status).toBe(404)
    expect(((await unknown.json()) as { data: { code: string } }).data.code).toBe('unit_not_found')
    const never = await api(`/api/units/${prefixed[0]}/certificate.pdf`, 'support')
    expect(never.status).toBe(409)
    expect(((await never.json()) as { data: { code: string } }).data.code).toBe('no_production_test')
  })

  it('is e-mailed from the record, arrives with the PDF attached, and the sending is audited', async () => {
    const res = await api(`/api/units/${serial}/certificate/send`, 'support', { method: 'POST', body: { to: 'Customer@Example.test', message: 'Your unit as it left the factory.' } })
    expect(res.status).toBe(200)
    expect(await res.json()).toMatchObject({ serial, recipients: ['customer@example.test'], accepted: ['customer@example.test'], attachment: `certificate-${serial}.pdf` })
    let mail: MailboxEntry | undefined
    for (let i = 0; i < 100 && !mail; i++) {
      mail = mailbox().find((m) => m.envelopeTo.includes('customer@example.test') && m.subject.includes(serial))
      if (!mail) await new Promise((r) => setTimeout(r, 100))
    }
    expect(mail?.attachments).toEqual([`certificate-${serial}.pdf`])
    const raw = readFileSync(join(mailboxDir, `${mail!.id}.eml`), 'utf8')
    expect(raw).toMatch(/Content-Type: application\/pdf/i)
    expect(raw).toContain('JVBERi0') // "%PDF-" in base64: a real PDF, not an empty part
    expect(raw).toContain('Your unit as it left the factory.')
    const rows = await audits('certificate.send', serial)
    expect(rows.at(-1)!.detail).toMatchObject({ to: ['customer@example.test'], recordingId: ids.retest })
  })

  it.each([
    ['technician', { to: 'a@example.test' }, 403],
    ['support', { to: [] }, 400],
    ['support', { to: 'not an address' }, 400],
    ['quality', {}, 400],
  ] as const)('%s sending %j → %i, and nothing goes out', async (role, body, status) => {
    const before = mailbox().length
    expect((await api(`/api/units/${serial}/certificate/send`, role, { method: 'POST', body })).status).toBe(status)
    expect(mailbox().length).toBe(before)
  })
})
