import fc from 'fast-check'
import { PDFParse } from 'pdf-parse'
import { describe, expect, it } from 'vitest'
import type { RecordingView } from '../../shared/types/api'
import type { UnitView } from '../../shared/types/units'
import { editDistance, normalizeSerialQuery, parameterRows, rankNearest, sendCertificateSchema, unitSearchQuerySchema } from '../../shared/utils/units'
import { likePrefix } from '../../server/repos/units'
import { renderCertificatePdf, utcStamp } from '../../server/reports/certificate'

describe('what a person typed or a scanner sent, as a serial', () => {
  it.each([
    ['plain', 'CT-7A-000123', 'CT-7A-000123'],
    ['scanner CR suffix', 'CT-7A-000123\r', 'CT-7A-000123'],
    ['CR LF and spaces', '  CT-7A-000123\r\n', 'CT-7A-000123'],
    ['tab suffix', 'CT-7A-000123\t', 'CT-7A-000123'],
    ['GS control character inside (GS1 separator)', 'CT-7A\u001d-000123', 'CT-7A-000123'],
    // AIM symbology identifier "]C0" (Code 128), ISO/IEC 15424: a scanner may send it first.
    ['AIM identifier prefix', ']C0CT-7A-000123', 'CT-7A-000123'],
    // Code 39 start/stop character, passed through by some scanners (ISO/IEC 16388).
    ['Code 39 stars', '*CT-7A-000123*', 'CT-7A-000123'],
    ['lower case kept as typed', 'ct-7a', 'ct-7a'],
    ['a prefix', 'CT-7', 'CT-7'],
  ])('%s', (_name, raw, serial) => {
    expect(normalizeSerialQuery(raw)).toBe(serial)
  })

  it.each([
    ['empty', ''],
    ['only control characters', '\r\n\t'],
    ['a space inside', 'CT 7A'],
    ['a slash inside', 'CT/7A'],
  ])('refuses %s', (_name, raw) => {
    expect(normalizeSerialQuery(raw)).toBeNull()
  })

  it('the query schema answers with the serial, and names the rule when it cannot', () => {
    expect(unitSearchQuerySchema.parse({ q: 'CT-7A-000123\r' })).toEqual({ q: 'CT-7A-000123' })
    expect(() => unitSearchQuerySchema.parse({ q: 'C' })).toThrow(/at least 2 characters/)
    expect(() => unitSearchQuerySchema.parse({ q: 'CT 7' })).toThrow(/letters, digits/)
    expect(() => unitSearchQuerySchema.parse({})).toThrow(/q is required/)
  })

  it('whatever the scanner adds around a serial, the serial comes back', () => {
    const serial = fc.stringMatching(/^[A-Za-z0-9][A-Za-z0-9._-]{2,20}[A-Za-z0-9]$/)
    const noise = fc.constantFrom('', '\r', '\n', '\r\n', '\t', ' ', '\u001d')
    fc.assert(fc.property(noise, serial, noise, (a, s, b) => normalizeSerialQuery(`${a}${s}${b}`) === s))
  })
})

describe('edit distance (optimal string alignment, Damerau 1964)', () => {
  it.each([
    ['CT-000123', 'CT-000123', 0],
    ['CT-000123', 'CT-000124', 1], // substitution
    ['CT-000123', 'CT-00123', 1], // deletion
    ['CT-000123', 'CT-0000123', 1], // insertion
    ['CT-000123', 'CT-000213', 1], // neighbours swapped
    ['kitten', 'sitting', 3], // the textbook example (Levenshtein distance 3)
    ['', 'abc', 3],
    ['ca', 'abc', 3], // OSA, unlike full Damerau–Levenshtein (2), does not edit a swapped pair again
  ])('%s → %s is %i', (a, b, d) => {
    expect(editDistance(a, b)).toBe(d)
    expect(editDistance(b, a)).toBe(d)
  })

  it('is zero only for equal strings and never more than the longer length', () => {
    const s = fc.string({ maxLength: 12 })
    fc.assert(
      fc.property(s, s, (a, b) => {
        const d = editDistance(a, b)
        return (d === 0) === (a === b) && d <= Math.max(a.length, b.length) && d >= Math.abs(a.length - b.length)
      }),
    )
  })
})

describe('nearest serials', () => {
  const pool = ['CT-7A-000123', 'CT-7A-000124', 'CT-7A-000213', 'CT-7A-100123', 'CT-9Z-555555', 'XX-000123']

  it('one mistake away first, closest first, far ones left out', () => {
    // Typed with its last two digits swapped: 000123 is one swap away; 000124 (two substitutions),
    // 000213 (an insertion and a deletion) and 100123 (a substitution and a swap) are two away, in
    // alphabetical order; the others are 6 and 8 edits away, beyond the limit of 3 for 12 characters.
    expect(rankNearest('CT-7A-000132', pool)).toEqual(['CT-7A-000123', 'CT-7A-000124', 'CT-7A-000213', 'CT-7A-100123'])
  })

  it('serials ending with what was typed come first (the last digits of a label)', () => {
    // Both end with it (the closer, 3 edits, before the one 6 away); CT-7A-000124 does not, and is 7 edits away.
    expect(rankNearest('000123', pool)).toEqual(['XX-000123', 'CT-7A-000123'])
  })

  it('case is ignored and a candidate is offered once', () => {
    expect(rankNearest('ct-7a-000125', ['CT-7A-000124', 'CT-7A-000124'])).toEqual(['CT-7A-000124'])
  })

  it('LIKE patterns take % _ and \\ literally', () => {
    expect(likePrefix('a_b%c\\')).toBe('a\\_b\\%c\\\\%')
  })
})

describe('certificate e-mail input', () => {
  it('takes one address or a list, lower-cased and without repeats', () => {
    expect(sendCertificateSchema.parse({ to: 'Buyer@Example.test' }).to).toEqual(['buyer@example.test'])
    expect(sendCertificateSchema.parse({ to: ['a@example.test', 'A@example.test'], message: ' hi ' })).toEqual({ to: ['a@example.test'], message: 'hi' })
  })
  it.each([[{ to: [] }], [{ to: 'not an address' }], [{}], [{ to: Array.from({ length: 21 }, (_, i) => `r${i}@example.test`) }]])('refuses %j', (body) => {
    expect(sendCertificateSchema.safeParse(body).success).toBe(false)
  })
})

const TEST: RecordingView = {
  id: 42,
  serial: 'CT-7A-000123',
  productCode: 'W165-4',
  lotCode: 'L-2611-03',
  stationId: 1,
  stationName: 'Line 2 end-of-line',
  kind: 'sweep',
  status: 'done',
  verdict: 'fail',
  retestReason: null,
  retestAdvice: null,
  failedChecks: ['fsHz', 'polarity'],
  undecidedChecks: [],
  uploadedAt: '2026-11-26T09:41:07.000Z',
  finishedAt: '2026-11-26T09:41:08.000Z',
  originalName: 'unit.wav',
  returnTest: false,
  purpose: 'production',
  maskVersion: 3,
  error: null,
  parameters: { reOhm: 3.31, re20Ohm: 3.3, ambientC: 23, fsHz: 61.27, qms: 4.1, qes: 0.52, qts: 0.46, leMh: 0.31, zmaxOhm: 30, zminOhm: 3.6, sensitivityDb: 88.4, thdPct: 0.8, thdMaxPct: 2.1, rubBuzzDb: -61.2 },
  checks: [
    { name: 'fsHz', value: 61.27, low: 45, high: 60, unit: 'Hz', pass: false },
    { name: 're20Ohm', value: 3.3, low: 3.1, high: 3.5, unit: 'Ω', pass: true },
    { name: 'polarity', value: -1, low: 1, high: null, unit: '', pass: false },
    { name: 'splDb', value: 0, low: null, high: null, unit: 'dB', pass: true },
  ],
  unmeasured: [],
  warnings: [],
  notes: [],
  thdAt: [],
  flags: { polarity: 'inverted', openCoil: false, shortedCoil: false, rubBuzz: false },
  classical: null,
  engineVersion: 'test',
  timingsMs: null,
}

describe('parameter rows (unit page and certificate)', () => {
  it('puts each figure beside the judging mask limits and outcome', () => {
    const rows = parameterRows(TEST.parameters, TEST.flags, TEST.checks)
    const row = (k: string) => rows.find((r) => r.key === k)!
    expect(row('fsHz')).toMatchObject({ value: '61.3', low: '45.0', high: '60.0', outcome: 'fail' })
    expect(row('re20Ohm')).toMatchObject({ value: '3.30', low: '3.10', high: '3.50', outcome: 'pass' })
    expect(row('qms')).toMatchObject({ value: '4.10', low: '–', high: '–', outcome: null })
    expect(row('polarity')).toMatchObject({ value: 'inverted', low: 'normal', outcome: 'fail' })
    const raw = parameterRows({ ...TEST.parameters, re20Ohm: null }, TEST.flags, TEST.checks).find((r) => r.key === 're20Ohm')!
    expect(raw).toMatchObject({ label: 'Re (ambient not given)', value: '3.31' })
    expect(rows.map((r) => r.key)).toEqual(['re20Ohm', 'fsHz', 'qms', 'qes', 'qts', 'leMh', 'sensitivityDb', 'thdMaxPct', 'rubBuzzDb', 'polarity'])
  })
})

describe('certificate PDF', () => {
  const unit = {
    serial: TEST.serial,
    product: { id: 1, code: 'W165-4', name: 'Invented 6.5 in woofer', ratedImpedanceOhm: 4, nominalSize: '6.5 in', sensitivityBandHz: [300, 3000], activeMaskId: 3, coil: null, expectedRe20Ohm: null, reWarnPct: 5, retestLimit: 2, limitFloors: {}, falseRejectMaxPct: 1 },
    lot: { code: 'L-2611-03' },
    verdict: 'fail',
    retests: { inARow: 0, limit: 2, needsReview: false },
    recordings: [],
    latestProductionId: 42,
    registeredAt: '2026-11-26T09:41:07.000Z',
    currentMask: null,
  } satisfies UnitView
  const freqHz = Array.from({ length: 241 }, (_, i) => 1000 * 10 ** ((3 * (i - 120)) / 80))

  it('is one page with the serial, verdict, mask version, station, test and issue dates', async () => {
    const pdf = await renderCertificatePdf({
      unit,
      test: TEST,
      curves: { freqHz, splDb: freqHz.map(() => 88), impedanceOhm: null, thdPct: null, splUncertaintyDb: null, thdFloorPct: null, maskSplDb: { freqHz: [50, 5000], low: [85, 85], high: [91, 91] }, maskImpedanceOhm: null },
      issuedAt: '2026-12-02T10:00:00.000Z',
    })
    const { total, text } = await new PDFParse({ data: pdf }).getText()
    expect(total).toBe(1)
    for (const s of ['CT-7A-000123', 'FAIL', 'mask version 3', 'Line 2 end-of-line', 'L-2611-03', '2026-11-26 09:41 UTC', 'Issued 2026-12-02 10:00 UTC', 'issued by Conetrail', 'Re at 20 °C', '61.3', 'inverted']) {
      expect(text).toContain(s)
    }
  })

  it('states "not judged" when no mask judged the test, and draws no chart without a response', async () => {
    const pdf = await renderCertificatePdf({ unit: { ...unit, verdict: null }, test: { ...TEST, verdict: null, maskVersion: null, checks: [] }, curves: null, issuedAt: '2026-12-02T10:00:00.000Z' })
    const { total, text } = await new PDFParse({ data: pdf }).getText()
    expect(total).toBe(1)
    expect(text).toContain('NOT JUDGED')
    expect(text).toContain('no mask was released')
    expect(text).not.toContain('Frequency response')
    expect(utcStamp('2026-01-05T23:59:59.999Z')).toBe('2026-01-05 23:59 UTC')
  })

  it('states RETEST for a unit whose tests all ended retest, and "undecided" beside a check that could not decide, never FAIL', async () => {
    const undecided = { ...TEST, verdict: 'retest' as const, retestReason: 'noise' as const, failedChecks: [], undecidedChecks: ['fsHz'], checks: [{ ...TEST.checks[0]!, undecided: true }, TEST.checks[1]!] }
    const pdf = await renderCertificatePdf({ unit: { ...unit, verdict: 'retest' }, test: undecided, curves: null, issuedAt: '2026-12-02T10:00:00.000Z' })
    const { text } = await new PDFParse({ data: pdf }).getText()
    expect(text).toContain('RETEST')
    expect(text).toMatch(/Fs 61\.3 Hz 45\.0 60\.0 undecided/)
    expect(text).not.toContain('FAIL')
  })
})
