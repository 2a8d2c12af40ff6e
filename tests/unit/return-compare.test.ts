import { describe, expect, it } from 'vitest'
import type { CompareFigures, CompareReading } from '../../shared/types/returns'
import {
  RETURN_FS_SHIFT_PCT,
  RETURN_QMS_DROP_PCT,
  RETURN_RE_SHIFT_PCT,
  RETURN_SENS_DROP_DB,
  deltaChangeText,
  deltaValueText,
  returnDeltaRows,
  returnReadings,
  signedFigure,
  latestReceivedOn,
  receivedOnProblem,
  returnCreateSchema,
  returnSafeFileName,
} from '../../shared/utils/returns'
import { sniffAttachmentType } from '../../server/storage/attachments'

/** A healthy factory test of an invented 8 Ω woofer. */
const FACTORY: CompareFigures = {
  fsHz: 42,
  re20Ohm: 6.8,
  qts: 0.4,
  qms: 4.2,
  qes: 0.44,
  sensitivityDb: 89,
  thdMaxPct: 1.2,
  rubBuzzDb: -62,
  polarity: 'normal',
  openCoil: false,
  shortedCoil: false,
}
const ret = (change: Partial<CompareFigures>): CompareFigures => ({ ...FACTORY, ...change })
const codes = (rs: CompareReading[]) => rs.map((r) => r.code)

describe('delta table', () => {
  it('gives the absolute change and the change in % of each figure', () => {
    const rows = returnDeltaRows(FACTORY, ret({ fsHz: 33.6, qms: 3.15 }))
    const fs = rows.find((r) => r.figure === 'fsHz')!
    expect(fs.change).toBeCloseTo(-8.4, 10)
    expect(fs.changePct).toBeCloseTo(-20, 10)
    expect(fs.significant).toBe(true)
    const qms = rows.find((r) => r.figure === 'qms')!
    expect(qms.changePct).toBeCloseTo(-25, 10)
    expect(rows.find((r) => r.figure === 're20Ohm')).toMatchObject({ change: 0, changePct: 0, significant: false })
    expect(rows.map((r) => r.figure)).toEqual(['fsHz', 're20Ohm', 'qts', 'qms', 'qes', 'sensitivityDb', 'thdMaxPct', 'rubBuzzDb'])
  })

  it('reads a dB figure\'s change in dB and THD\'s in percentage points, never in % of the value', () => {
    const rows = returnDeltaRows(FACTORY, ret({ sensitivityDb: 86.5, rubBuzzDb: -38.2, thdMaxPct: 2.0 }))
    const sens = rows.find((r) => r.figure === 'sensitivityDb')!
    expect(sens).toMatchObject({ changeKind: 'db', changePct: null, significant: true })
    expect(deltaChangeText(sens)).toBe('-2.5 dB')
    const rb = rows.find((r) => r.figure === 'rubBuzzDb')!
    expect([rb.changeKind, rb.changePct, deltaChangeText(rb)]).toEqual(['db', null, '+23.8 dB'])
    const thd = rows.find((r) => r.figure === 'thdMaxPct')!
    expect([thd.changeKind, thd.changePct, deltaChangeText(thd)]).toEqual(['points', null, '+0.80 pp'])
    expect(rows.filter((r) => r.changeKind === 'pct').map((r) => r.figure)).toEqual(['fsHz', 're20Ohm', 'qts', 'qms', 'qes'])
  })

  it('rounds each figure to its own decimals and never shows a negative zero', () => {
    const rows = returnDeltaRows(FACTORY, ret({ re20Ohm: 6.8 - 1e-6, qts: 0.4 + 1e-6, sensitivityDb: 89 - 0.01, thdMaxPct: 1.2 - 0.001 }))
    const by = (f: string) => rows.find((r) => r.figure === f)!
    expect(deltaChangeText(by('re20Ohm'))).toBe('0.0 %')
    expect(deltaChangeText(by('qts'))).toBe('0.0 %')
    expect(deltaChangeText(by('sensitivityDb'))).toBe('0.0 dB')
    expect(deltaChangeText(by('thdMaxPct'))).toBe('0.00 pp')
    expect(deltaValueText(by('re20Ohm'), by('re20Ohm').returned)).toBe('6.80')
    expect(deltaValueText(by('fsHz'), -0.04)).toBe('0.0')
    expect(deltaChangeText(returnDeltaRows(FACTORY, ret({ fsHz: null })).find((r) => r.figure === 'fsHz')!)).toBe('–')
    expect(signedFigure(-0.00049, 3)).toBe('0.000')
    expect(signedFigure(-0.0005, 3)).toBe('-0.001')
    expect(signedFigure(8.44, 1)).toBe('+8.4')
  })

  it('leaves the change empty when either test lacks the figure', () => {
    const rows = returnDeltaRows(ret({ qms: null }), ret({ fsHz: null }))
    expect(rows.find((r) => r.figure === 'qms')).toMatchObject({ factory: null, change: null, changePct: null, significant: false })
    expect(rows.find((r) => r.figure === 'fsHz')).toMatchObject({ returned: null, change: null, changePct: null, significant: false })
  })

  // Thresholds are common practice (shared/utils/returns.ts); just inside and just beyond each.
  it.each([
    ['fsHz', { fsHz: 42 * (1 - (RETURN_FS_SHIFT_PCT - 1) / 100) }, false],
    ['fsHz', { fsHz: 42 * (1 - (RETURN_FS_SHIFT_PCT + 1) / 100) }, true],
    ['fsHz', { fsHz: 42 * (1 + (RETURN_FS_SHIFT_PCT + 1) / 100) }, true],
    ['re20Ohm', { re20Ohm: 6.8 * (1 + (RETURN_RE_SHIFT_PCT - 1) / 100) }, false],
    ['re20Ohm', { re20Ohm: 6.8 * (1 + (RETURN_RE_SHIFT_PCT + 1) / 100) }, true],
    ['sensitivityDb', { sensitivityDb: 89 - RETURN_SENS_DROP_DB + 0.2 }, false],
    ['sensitivityDb', { sensitivityDb: 89 - RETURN_SENS_DROP_DB - 0.2 }, true],
    ['thdMaxPct', { thdMaxPct: 2.0 }, false],
    ['thdMaxPct', { thdMaxPct: 2.6 }, true],
    ['rubBuzzDb', { rubBuzzDb: -55 }, false],
    ['rubBuzzDb', { rubBuzzDb: -40 }, true],
  ] as const)('%s %o significant: %s', (figure, change, significant) => {
    expect(returnDeltaRows(FACTORY, ret(change)).find((r) => r.figure === figure)!.significant).toBe(significant)
  })
})

describe('readings (trade practice, common practice of repair desks)', () => {
  it.each<[string, Partial<CompareFigures>, CompareReading['code'][]]>([
    ['no change', {}, ['no_fault_found']],
    ['small spread only', { fsHz: 43, re20Ohm: 6.85, sensitivityDb: 88.6 }, ['no_fault_found']],
    ['Fs dropped a lot and Qms fell', { fsHz: 42 * (1 - (RETURN_FS_SHIFT_PCT + 5) / 100), qms: 4.2 * (1 - (RETURN_QMS_DROP_PCT + 5) / 100) }, ['suspension_fatigued']],
    ['Fs dropped a lot, Qms kept', { fsHz: 35 }, ['suspension_fatigued']],
    ['Fs rose a lot', { fsHz: 50 }, ['suspension_stiffened']],
    ['open coil flagged', { openCoil: true, fsHz: null, sensitivityDb: null }, ['coil_open']],
    ['Re ten times higher', { re20Ohm: 6.8 * 20 }, ['coil_open']],
    ['shorted coil flagged', { shortedCoil: true }, ['coil_shorted']],
    ['new rub and buzz', { rubBuzzDb: -38 }, ['new_rub_buzz']],
    ['sensitivity down, Re unchanged', { sensitivityDb: 86.5 }, ['motor_or_cone']],
    ['polarity changed', { polarity: 'inverted' }, ['polarity_changed']],
    ['Re up (overheated)', { re20Ohm: 7.4 }, ['coil_overheated']],
    ['Re down (shorted turns)', { re20Ohm: 6.2 }, ['shorted_turns']],
    ['THD doubled', { thdMaxPct: 3.5 }, ['distortion_up']],
    ['overload: rub and buzz and Fs down together', { rubBuzzDb: -40, fsHz: 36, qms: 3.2 }, ['suspension_fatigued', 'new_rub_buzz']],
  ])('%s → %o', (_name, change, expected) => {
    const rs = returnReadings(FACTORY, ret(change))
    expect(codes(rs)).toEqual(expected)
    for (const r of rs) expect(r.basis).toBe('trade practice')
  })

  it('says the classic suspension reading in plain words', () => {
    const [r] = returnReadings(FACTORY, ret({ fsHz: 34, qms: 3.0 }))
    expect(r!.text).toMatch(/Fs dropped a lot and Qms fell → suspension fatigued or surround damaged/)
  })

  it('reads a sensitivity drop as motor or cone only when Re stayed put (else it is the coil)', () => {
    expect(codes(returnReadings(FACTORY, ret({ sensitivityDb: 86, re20Ohm: 7.6 })))).toEqual(['coil_overheated'])
  })

  it('does not read rub and buzz the factory unit already had as new', () => {
    expect(codes(returnReadings(ret({ rubBuzzDb: -45 }), ret({ rubBuzzDb: -44 })))).toEqual(['no_fault_found'])
  })
})

describe('attachments', () => {
  const PNG = Buffer.from('89504e470d0a1a0a0000000d49484452', 'hex')
  it.each([
    ['PNG signature and IHDR', PNG, 'image/png'],
    ['JPEG SOI and APP0', Buffer.from('ffd8ffe000104a464946000101000001', 'hex'), 'image/jpeg'],
    ['PDF header', Buffer.from('%PDF-1.7\n%âãÏÓ\n', 'latin1'), 'application/pdf'],
    ['text named .png', Buffer.from('hello, I am not a picture'), null],
    ['PNG signature without IHDR', Buffer.from('89504e470d0a1a0a0000000d49444154', 'hex'), null],
    ['truncated PNG', PNG.subarray(0, 8), null],
    ['empty', Buffer.alloc(0), null],
  ] as const)('%s → %s', (_name, bytes, type) => {
    expect(sniffAttachmentType(bytes)).toBe(type)
  })

  it.each([
    ['../../etc/passwd', 'passwd'],
    ['..\\..\\boot.ini', 'boot.ini'],
    ['photo of "cone".png', 'photo_of_cone_.png'],
    ['...', 'attachment'],
    ['façade.jpg', 'fa_ade.jpg'],
  ])('download name of %s is %s', (name, safe) => {
    expect(returnSafeFileName(name)).toBe(safe)
  })
})

describe('register form input', () => {
  // The server's clock is UTC; a desk east of UTC is already on the next day, so one day ahead is allowed.
  it('allows a date received up to one day after the UTC date, whatever the hour', () => {
    expect(latestReceivedOn(new Date('2026-12-31T23:59:00Z'))).toBe('2027-01-01')
    expect(latestReceivedOn(new Date('2026-03-01T00:00:00Z'))).toBe('2026-03-02')
    const now = new Date('2026-12-02T05:00:00Z')
    expect(receivedOnProblem('2026-12-02', now)).toBeNull()
    expect(receivedOnProblem('2026-12-03', now)).toBeNull()
    expect(receivedOnProblem('2026-12-04', now)?.code).toBe('received_in_future')
    expect(receivedOnProblem('2027-06-01', now)?.code).toBe('received_in_future')
  })

  it('refuses a date received before 2000 as a typing mistake', () => {
    const now = new Date('2026-12-02T05:00:00Z')
    expect(receivedOnProblem('2000-01-01', now)).toBeNull()
    expect(receivedOnProblem('1999-12-31', now)).toMatchObject({ code: 'received_too_early', message: expect.stringContaining('check the year') })
  })

  it('reads the serial as the search box does: spaces and a scanner\'s characters cut, case kept for the lookup', () => {
    const base = { receivedOn: '2026-12-01', categoryId: 1 }
    expect(returnCreateSchema.parse({ ...base, serial: 'qb5w-0234-0003 ' }).serial).toBe('qb5w-0234-0003')
    expect(returnCreateSchema.parse({ ...base, serial: '*QB5W-0234-0003*\r\n' }).serial).toBe('QB5W-0234-0003')
    expect(returnCreateSchema.safeParse({ ...base, serial: 'QB 5W' }).success).toBe(false)
    expect(returnCreateSchema.safeParse({ ...base, serial: ' ab ' }).success).toBe(false)
  })
})
