/**
 * The two rules of every input read as text: no control characters but tab, CR and LF in text, and
 * numbers only as plain decimals (point or comma), never what JavaScript's Number() makes of a string.
 */
import { describe, expect, it } from 'vitest'
import { z } from 'zod'
import { controlCharacterIn, decimalNumber, plainText, readDecimal } from '../../shared/utils/input'
import { ambientCSchema, recentQuerySchema, uploadFieldsSchema } from '../../shared/utils/recordings'
import { auditQuerySchema } from '../../shared/utils/audit'
import { idParamSchema } from '../../shared/utils/ids'
import { InputValidationError } from '../../server/utils/errors'

describe('text', () => {
  it.each([
    ['NUL', 'a\u0000b', 'U+0000'],
    ['BEL', 'ring\u0007', 'U+0007'],
    ['ESC', '\u001b[31mred', 'U+001B'],
    ['vertical tab', 'a\u000bb', 'U+000B'],
    ['DEL', 'a\u007f', 'U+007F'],
    ['a C1 control', 'a\u0085b', 'U+0085'],
  ])('refuses %s', (_label, text, found) => {
    expect(controlCharacterIn(text)).toBe(found)
    expect(plainText().safeParse(text).success).toBe(false)
  })

  it.each([['tab', 'a\tb'], ['line breaks', 'one\r\ntwo\nthree'], ['accents and symbols', 'façade 6,5″ Ω µ'], ['empty', '']])('takes %s', (_label, text) => {
    expect(controlCharacterIn(text)).toBeNull()
    expect(plainText().parse(text)).toBe(text)
  })

  it('names the field in the refusal, for a list item too', () => {
    const schema = z.object({ note: plainText().trim().max(500), causes: z.array(plainText()) })
    const r = schema.safeParse({ note: 'ok\u0000', causes: ['fine', 'bell\u0007'] })
    const err = new InputValidationError(r.error!)
    expect(err.issues.map((i) => i.path)).toEqual(['note', 'causes.1'])
    expect(err.message).toBe('note must not hold control characters (such as NUL or BEL); tab and line breaks are fine; causes, item 2 must not hold control characters (such as NUL or BEL); tab and line breaks are fine')
  })

  it('checks the text as sent, before trimming', () => {
    // String.prototype.trim would remove a vertical tab or a form feed at the ends unseen.
    expect(plainText().trim().safeParse('name\u000c').success).toBe(false)
  })
})

describe('numbers sent as text', () => {
  it.each([
    ['12', 12],
    ['-3.25', -3.25],
    ['+4', 4],
    ['12,5', 12.5],
    [' 12', 12],
    [7, 7],
  ])('reads %j as %d', (raw, value) => {
    expect(readDecimal(raw)).toBe(value)
    expect(decimalNumber(z.number()).parse(raw)).toBe(value)
  })

  it.each([['0x10'], ['1e3'], ['Infinity'], ['-Infinity'], ['NaN'], ['0b101'], ['0o17'], ['12.'], ['.5'], ['1_000'], ['1 000'], ['12,5,1']])('refuses %j', (raw) => {
    expect(decimalNumber(z.number()).safeParse(raw).success).toBe(false)
  })

  it('reads an empty field as not given, never as 0', () => {
    expect(readDecimal('')).toBeUndefined()
    expect(readDecimal('   ')).toBeUndefined()
    expect(recentQuerySchema.parse({ limit: '' }).limit).toBe(20)
  })

  it('is the rule of the room temperature, of ids and of query numbers', () => {
    expect(ambientCSchema.safeParse('0x10').success).toBe(false)
    expect(ambientCSchema.safeParse('1e3').success).toBe(false)
    expect(ambientCSchema.safeParse('Infinity').success).toBe(false)
    expect(ambientCSchema.parse('12,5')).toBe(12.5)
    expect(uploadFieldsSchema.safeParse({ serial: 'AB-123', station: '0x1' }).success).toBe(false)
    expect(idParamSchema.safeParse({ id: '0x10' }).success).toBe(false)
    expect(idParamSchema.parse({ id: '16' })).toEqual({ id: 16 })
    expect(auditQuerySchema.safeParse({ page: '1e2' }).success).toBe(false)
    expect(auditQuerySchema.parse({ page: '3' }).page).toBe(3)
  })
})
