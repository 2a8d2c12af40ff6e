import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import nodemailer, { type SendMailOptions } from 'nodemailer'
import { afterAll, describe, expect, it } from 'vitest'
import { decodeWords, parseAddresses, parseMessage, parseParams } from '../../../server/mail/mime'
import { getMailboxMessage, listMailbox } from '../../../server/mail/mailbox'
import { runningSink, transportOptions } from '../../../server/mail/index'
import { sinkPort, startMailSink } from '../../../server/mail/sink'

describe('header decoding', () => {
  it.each([
    ['plain', 'Lot L-1 report', 'Lot L-1 report'],
    ['B word', '=?UTF-8?B?TG90IHJlcG9ydCDigJMgyrM=?=', 'Lot report – ʳ'],
    ['Q word with underscores', '=?utf-8?Q?Yield_below_80=C2=A0%?=', 'Yield below 80\u00a0%'],
    ['two adjacent words lose the space between them', '=?UTF-8?Q?a?= =?UTF-8?Q?b?=', 'ab'],
  ])('%s', (_name, raw, decoded) => {
    expect(decodeWords(raw)).toBe(decoded)
  })

  it('reads RFC 2231 continuations and charsets in parameters', () => {
    const p = parseParams(`attachment; filename*0*=utf-8''lot%20L%E2%80%931; filename*1*=.pdf`)
    expect(p.value).toBe('attachment')
    expect(p.params.filename).toBe('lot L–1.pdf')
    expect(parseParams('multipart/mixed; boundary="--_a;b"').params.boundary).toBe('--_a;b')
  })

  it('lists bare addresses from display-name lists', () => {
    expect(parseAddresses('"Quality, Line 2" <q2@example.test>, eng@example.test')).toEqual(['q2@example.test', 'eng@example.test'])
    expect(parseAddresses(undefined)).toEqual([])
  })
})

describe('messages written by nodemailer', () => {
  const build = (opts: SendMailOptions) =>
    new Promise<string>((ok, fail) =>
      nodemailer.createTransport({ streamTransport: true, buffer: true }).sendMail(opts, (err, info) => (err ? fail(err) : ok(String(info.message)))),
    )

  it('finds subject, recipients, the text part and attachment names', async () => {
    const raw = await build({
      from: 'Conetrail <conetrail@example.test>',
      to: ['a@example.test', 'B <b@example.test>'],
      subject: 'Lot report — L-42 ✓',
      text: 'Yield 91 %\nsee the PDF = attached',
      html: '<p>Yield 91 %</p>',
      date: new Date('2026-12-02T10:00:00Z'),
      attachments: [
        { filename: 'lot-L-42.pdf', content: Buffer.from('%PDF-1.4 fake') },
        { filename: 'données très longues '.repeat(4) + '.csv', content: 'a,b' },
      ],
    })
    const m = parseMessage(raw)
    expect(m.subject).toBe('Lot report — L-42 ✓')
    expect(m.to).toEqual(['a@example.test', 'b@example.test'])
    expect(m.from).toBe('Conetrail <conetrail@example.test>')
    expect(m.date).toBe('2026-12-02T10:00:00.000Z')
    expect(m.text).toBe('Yield 91 %\nsee the PDF = attached')
    expect(m.html).toBe('<p>Yield 91 %</p>')
    expect(m.attachments).toEqual(['lot-L-42.pdf', 'données très longues '.repeat(4) + '.csv'])
  })

  it('a message without attachments has none and its text is decoded', async () => {
    const m = parseMessage(await build({ from: 'x@example.test', to: 'y@example.test', subject: 's', text: 'é'.repeat(100) }))
    expect(m.attachments).toEqual([])
    expect(m.text).toBe('é'.repeat(100))
  })
})

describe('the local sink', () => {
  const dirs: string[] = []
  afterAll(() => dirs.forEach((d) => rmSync(d, { recursive: true, force: true })))

  it('keeps each message as .eml with an index entry, and announces itself while it listens', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'conetrail-sink-'))
    dirs.push(dir)
    const sink = await startMailSink({ dir })
    expect(runningSink(dir)?.port).toBe(sink.port)
    expect(transportOptions({ CONETRAIL_MAILBOX_DIR: dir })).toBe(sink.url)
    const t = nodemailer.createTransport(sink.url)
    await Promise.all(
      [1, 2, 3].map((i) =>
        t.sendMail({ from: 'c@example.test', to: `r${i}@example.test`, subject: `m${i}`, text: `body ${i}`, attachments: i === 2 ? [{ filename: 'r.pdf', content: 'x' }] : [] }),
      ),
    )
    t.close()
    const list = await listMailbox(dir)
    expect(list.map((m) => m.subject).sort()).toEqual(['m1', 'm2', 'm3'])
    expect(readdirSync(dir).filter((f) => f.endsWith('.eml'))).toHaveLength(3)
    const two = list.find((m) => m.subject === 'm2')!
    expect(two.envelopeTo).toEqual(['r2@example.test'])
    expect(two.attachments).toEqual(['r.pdf'])
    const full = await getMailboxMessage(dir, two.id)
    expect(full?.text).toBe('body 2')
    expect(full?.raw).toBe(readFileSync(join(dir, `${two.id}.eml`), 'utf8'))
    expect(await getMailboxMessage(dir, '../index')).toBeNull()
    await sink.close()
    expect(runningSink(dir)).toBeNull()
    expect(transportOptions({ CONETRAIL_MAILBOX_DIR: dir })).toBeNull()
  })

  it.each([
    [{}, 3000, 3025],
    [{ CONETRAIL_SMTP_SINK_PORT: '2525' }, 3000, 2525],
  ])('sink port %o with web port %i is %i', (env, web, port) => {
    expect(sinkPort(env, web)).toBe(port)
  })

  it('prefers configured SMTP settings', () => {
    expect(transportOptions({ SMTP_URL: 'smtp://u:p@mail.example.test:587' })).toBe('smtp://u:p@mail.example.test:587')
    expect(transportOptions({ SMTP_HOST: 'mail.example.test', SMTP_SECURE: 'true', SMTP_USER: 'u', SMTP_PASSWORD: 'p' })).toEqual({
      host: 'mail.example.test',
      port: 465,
      secure: true,
      auth: { user: 'u', pass: 'p' },
    })
    expect(() => sinkPort({ CONETRAIL_SMTP_SINK_PORT: 'x' }, 3000)).toThrow(/CONETRAIL_SMTP_SINK_PORT/)
  })
})
