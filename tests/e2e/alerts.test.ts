/**
 * E-mail and alerts end to end: the worker evaluates the alert rules after each
 * result; the local mail sink of the test stack receives what goes out. The rule under test: yield of
 * the last 5 judged units of an open lot below 80 % opens ONE alert and ONE e-mail per episode.
 */
import { readFileSync } from 'node:fs'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest'
import { generateRecording, type Defect } from '../../fixtures/generator'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { MailboxEntry, MailboxList, MailboxMessage } from '../../shared/types/mail'
import type { AlertView } from '../../shared/types/reports'
import type { Role } from '../../shared/utils/roles'
import type { Verdict } from '../../shared/utils/verdict'
import { signIn, useTestServer } from '../support/app'
import { closeTestDb, makeProduct, makeStation, releaseTestMask, testDb, unique } from '../support/db'
import { postRecording, waitFinished } from '../support/upload'
import { startWorker, type RunningWorker } from '../support/worker'

const host = await useTestServer()
const mailboxDir = inject('mailboxDir')
const SUBSCRIBERS = ['line-lead@example.test', 'qa@example.test']
/** Long enough for a worker to evaluate and mail after a result is done, were it to mail again. */
const SETTLE_MS = 1500

let worker: RunningWorker
let product: { id: number; code: string }
let station: { id: number; token: string }
const cookies = new Map<Role, string>()
const lotCode = unique('LOT')
let seed = 5000

async function api(path: string, role: Role | null, init: { method?: string; body?: unknown } = {}) {
  if (role && !cookies.has(role)) cookies.set(role, (await signIn(host, demoEmail(role), DEMO_PASSWORD)).cookie)
  const res = await fetch(new URL(path, host), {
    method: init.method ?? 'GET',
    headers: { ...(role ? { cookie: cookies.get(role)! } : {}), ...(init.body ? { 'content-type': 'application/json' } : {}) },
    body: init.body ? JSON.stringify(init.body) : undefined,
  })
  const text = await res.text()
  let body: unknown = text
  try {
    body = JSON.parse(text)
  } catch {
    // not JSON
  }
  return { status: res.status, body: body as never, text }
}

function mailbox(): MailboxEntry[] {
  try {
    return JSON.parse(readFileSync(join(mailboxDir, 'index.json'), 'utf8')) as MailboxEntry[]
  } catch {
    return []
  }
}
const alertMails = () => mailbox().filter((m) => m.subject.includes(lotCode) && m.subject.includes('Low yield'))

async function until<T>(what: string, probe: () => Promise<T | undefined> | T | undefined, timeoutMs = 20_000): Promise<T> {
  const end = Date.now() + timeoutMs
  for (;;) {
    const v = await probe()
    if (v !== undefined && v !== false) return v
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`)
    await new Promise((r) => setTimeout(r, 150))
  }
}

/** Uploads and analyses units of the lot one after another (production order). */
async function units(verdicts: Verdict[]) {
  for (const v of verdicts) {
    const defect: Defect = v === 'fail' ? 'inverted_polarity' : 'none'
    const up = await postRecording(
      host,
      { token: station.token },
      { serial: unique('AL'), product: product.code, lot: lotCode },
      { bytes: generateRecording({ seed: seed++, defect }), name: 'unit.wav' },
    )
    expect(up.status).toBe(202)
    const done = await waitFinished(host, { token: station.token }, up.body.id)
    expect(done.status).toBe('done')
    expect(done.verdict).toBe(v)
  }
}

async function lowYieldAlerts() {
  const lot = await testDb()('lots').where({ code: lotCode }).first('id')
  return testDb()('alerts').where({ lot_id: lot.id, kind: 'low_yield' }).orderBy('id')
}

beforeAll(async () => {
  worker = startWorker()
  await worker.ready
  product = await makeProduct(unique('P'), 6)
  station = await makeStation()
  // Only the fixed polarity check: a unit with inverted polarity fails, a healthy one passes.
  await releaseTestMask(product.id, { scalars: {}, polarityNormal: true, curves: {} })
  const put = await api(`/api/products/${product.code}/alerting`, 'quality', {
    method: 'PUT',
    body: { lastN: 5, minYieldPct: 80, enabled: true, subscribers: ['QA@example.test', 'line-lead@example.test', 'qa@example.test'] },
  })
  expect(put.status).toBe(200)
  expect(put.body).toEqual({ lastN: 5, minYieldPct: 80, enabled: true, subscribers: SUBSCRIBERS })
}, 120_000)

afterAll(async () => {
  await worker?.stop()
  await closeTestDb()
})

describe('low-yield alert: once per episode', () => {
  it('stays quiet while the last 5 units are at the threshold (80 % is not below 80 %)', async () => {
    await units(['pass', 'pass', 'pass', 'pass', 'fail'])
    await new Promise((r) => setTimeout(r, SETTLE_MS))
    expect(await lowYieldAlerts()).toHaveLength(0)
    expect(alertMails()).toHaveLength(0)
  }, 120_000)

  it('opens one alert and mails the subscribers once when the yield drops below, however many failures follow', async () => {
    await units(['fail'])
    const [mail] = await until('the alert e-mail', () => (alertMails().length ? alertMails() : undefined))
    expect(mail!.envelopeTo.sort()).toEqual(SUBSCRIBERS)
    expect(mail!.to.sort()).toEqual(SUBSCRIBERS)
    const full = await api(`/api/dev/mailbox/${mail!.id}`, 'admin')
    expect((full.body as MailboxMessage).text).toContain('Yield 60 % over the last 5 judged units')

    await units(['fail', 'fail', 'fail'])
    await new Promise((r) => setTimeout(r, SETTLE_MS))
    expect(alertMails()).toHaveLength(1)
    const alerts = await lowYieldAlerts()
    expect(alerts).toHaveLength(1)
    expect(alerts[0].closed_at).toBeNull()
    expect(alerts[0].mailed_at).not.toBeNull()

    const open = await api('/api/alerts?open=true', 'quality')
    expect(open.status).toBe(200)
    const mine = (open.body as AlertView[]).filter((a) => a.lotCode === lotCode)
    expect(mine).toEqual([expect.objectContaining({ productCode: product.code, kind: 'low_yield', closedAt: null })])
  }, 120_000)

  it('closes the alert when the yield recovers, and a later drop is a new episode with a second e-mail', async () => {
    // Last 5 after these: 4 passes and 1 failure = 80 %, back at the threshold.
    await units(['pass', 'pass', 'pass', 'pass'])
    const [closed] = await until('the alert to close', async () => ((await lowYieldAlerts())[0]?.closed_at ? await lowYieldAlerts() : undefined))
    expect(closed!.episode).toBe(1)
    expect(((await api('/api/alerts?open=true', 'engineer')).body as AlertView[]).filter((a) => a.lotCode === lotCode)).toEqual([])
    expect(alertMails()).toHaveLength(1)

    await units(['fail', 'fail'])
    const mails = await until('the second e-mail', () => (alertMails().length === 2 ? alertMails() : undefined))
    const alerts = await lowYieldAlerts()
    expect(alerts.map((a) => [a.episode, a.closed_at === null])).toEqual([
      [1, false],
      [2, true],
    ])
    const second = (await api(`/api/dev/mailbox/${mails[1]!.id}`, 'admin')).body as MailboxMessage
    expect(second.text).toContain('episode 2')
    await new Promise((r) => setTimeout(r, SETTLE_MS))
    expect(alertMails()).toHaveLength(2)

    // Switching the product's alerts off ends the open episode.
    const off = await api(`/api/products/${product.code}/alerting`, 'quality', { method: 'PUT', body: { lastN: 5, minYieldPct: 80, enabled: false, subscribers: SUBSCRIBERS } })
    expect(off.status).toBe(200)
    expect((await lowYieldAlerts()).every((a) => a.closed_at !== null)).toBe(true)
  }, 120_000)
})

describe('who may see and change alerting', () => {
  it.each([
    ['technician', 'GET', '/api/alerts', 403],
    ['support', 'GET', '/api/alerts?open=true', 403],
    ['technician', 'GET', 'alerting', 403],
    ['technician', 'PUT', 'alerting', 403],
    [null, 'GET', '/api/alerts', 401],
    ['engineer', 'GET', 'alerting', 200],
  ] as const)('%s %s %s → %i', async (role, method, path, status) => {
    const url = path === 'alerting' ? `/api/products/${product.code}/alerting` : path
    const body = method === 'PUT' ? { lastN: 5, minYieldPct: 80, enabled: true, subscribers: [] } : undefined
    expect((await api(url, role, { method, body })).status).toBe(status)
  })

  it('refuses bad settings and unknown products', async () => {
    const bad = await api(`/api/products/${product.code}/alerting`, 'engineer', { method: 'PUT', body: { lastN: 0, minYieldPct: 120, enabled: true, subscribers: ['not-an-address'] } })
    expect(bad.status).toBe(400)
    expect((bad.body as { data: { issues: { path: string }[] } }).data.issues.map((i) => i.path).sort()).toEqual(['lastN', 'minYieldPct', 'subscribers.0'])
    expect((await api('/api/products/NO-SUCH-PRODUCT/alerting', 'quality')).status).toBe(404)
    // Unchanged by the refused PUT.
    expect(((await api(`/api/products/${product.code}/alerting`, 'quality')).body as { subscribers: string[] }).subscribers).toEqual(SUBSCRIBERS)
  })
})

describe('sending a lot report', () => {
  it('mails the PDF to the chosen recipients', async () => {
    const res = await api(`/api/lots/${lotCode}/send`, 'quality', { method: 'POST', body: { recipients: ['buyer@example.test'], message: 'Report for lot as agreed.' } })
    expect(res.status).toBe(200)
    expect(res.body).toMatchObject({ lotCode, recipients: ['buyer@example.test'], accepted: ['buyer@example.test'], attachment: `lot-${lotCode}.pdf` })
    const mail = await until('the report e-mail', () => mailbox().find((m) => m.envelopeTo.includes('buyer@example.test') && m.subject.includes(lotCode)))
    expect(mail.attachments).toEqual([`lot-${lotCode}.pdf`])
    const raw = readFileSync(join(mailboxDir, `${mail.id}.eml`), 'utf8')
    expect(raw).toMatch(/Content-Type: application\/pdf/i)
    // "%PDF-" in base64: the attachment is a real PDF, not an empty part.
    expect(raw).toContain('JVBERi0')
    const full = (await api(`/api/dev/mailbox/${mail.id}`, 'admin')).body as MailboxMessage
    expect(full.text).toContain('Report for lot as agreed.')
  }, 60_000)

  it.each([
    ['technician', { recipients: ['a@example.test'] }, 403],
    ['support', { recipients: ['a@example.test'] }, 403],
    ['engineer', { recipients: [] }, 400],
    ['engineer', { recipients: ['not an address'] }, 400],
    ['engineer', { recipients: Array.from({ length: 21 }, (_, i) => `r${i}@example.test`) }, 400],
  ] as const)('%s with %j → %i', async (role, body, status) => {
    const before = mailbox().length
    expect((await api(`/api/lots/${lotCode}/send`, role, { method: 'POST', body })).status).toBe(status)
    expect(mailbox().length).toBe(before)
  })

  it('an unknown lot is 404', async () => {
    expect((await api('/api/lots/NO-SUCH-LOT/send', 'engineer', { method: 'POST', body: { recipients: ['a@example.test'] } })).status).toBe(404)
  })
})

describe('dev mailbox', () => {
  it('lists what the sink received, newest first, for admins only', async () => {
    const res = await api('/api/dev/mailbox', 'admin')
    expect(res.status).toBe(200)
    const list = res.body as MailboxList
    expect(list.messages.length).toBe(mailbox().length)
    expect(list.messages[0]!.id).toBe(mailbox().at(-1)!.id)
    const times = list.messages.map((m) => m.receivedAt)
    expect([...times].sort().reverse()).toEqual(times)
    for (const role of ['quality', 'engineer', 'technician'] as const) expect((await api('/api/dev/mailbox', role)).status).toBe(403)
    expect((await api(`/api/dev/mailbox/${list.messages[0]!.id}`, 'quality')).status).toBe(403)
    expect((await api('/api/dev/mailbox', null)).status).toBe(401)
  })

  it('gives one message raw or as JSON; unknown ids are refused', async () => {
    const [latest] = ((await api('/api/dev/mailbox', 'admin')).body as MailboxList).messages
    const raw = await api(`/api/dev/mailbox/${latest!.id}?format=raw`, 'admin')
    expect(raw.status).toBe(200)
    expect(raw.text).toBe(readFileSync(join(mailboxDir, `${latest!.id}.eml`), 'utf8'))
    expect((await api('/api/dev/mailbox/1-9999', 'admin')).status).toBe(404)
    expect((await api('/api/dev/mailbox/..%2Findex', 'admin')).status).toBe(400)
  })
})
