/** What people read when a form's input is refused: plain words, never a raw path or NaN. */
import { describe, expect, it } from 'vitest'
import { ambientCSchema, uploadFieldsSchema } from '../../shared/utils/recordings'
import { returnRetestFieldsSchema } from '../../shared/utils/returns'
import { sendCertificateSchema } from '../../shared/utils/units'
import { InputValidationError, issueText } from '../../server/utils/errors'

describe('room temperature (ambientC)', () => {
  it.each([
    ['22.5', 22.5],
    ['22,5', 22.5],
    [' -3,25 ', -3.25],
    ['21', 21],
    [19.5, 19.5],
  ])('reads %j as %d °C (decimal point or decimal comma)', (raw, value) => {
    expect(ambientCSchema.parse(raw)).toBe(value)
  })

  it('treats an empty field as not given, not as 0 °C', () => {
    expect(ambientCSchema.parse('')).toBeUndefined()
    expect(uploadFieldsSchema.parse({ serial: 'AB-123', ambientC: '  ' }).ambientC).toBeUndefined()
  })

  it.each([['warm'], ['22,5,1'], ['1.234,5']])('refuses %j in words', (raw) => {
    const r = ambientCSchema.safeParse(raw)
    expect(r.success).toBe(false)
    expect(r.error!.issues[0]!.message).toBe('Room temperature (ambientC) must be a number of °C, such as 22.5')
  })

  it('refuses a value outside -20 to 60 °C with the range', () => {
    expect(ambientCSchema.safeParse('61').error!.issues[0]!.message).toContain('between -20 and 60 °C')
    expect(uploadFieldsSchema.safeParse({ serial: 'AB-123', ambientC: '-20,5' }).success).toBe(false)
  })

  it('reads the return re-test form the same way as the Bench', () => {
    expect(returnRetestFieldsSchema.parse({ station: '3', ambientC: '22,5' })).toEqual({ station: 3, ambientC: 22.5 })
    expect(returnRetestFieldsSchema.safeParse({ ambientC: 'warm' }).error!.issues[0]!.message).toBe('Room temperature (ambientC) must be a number of °C, such as 22.5')
  })
})

describe('a certificate e-mail to a bad address', () => {
  it('names the address, and the whole message has no raw path', () => {
    const r = sendCertificateSchema.safeParse({ to: ['buyer@example.test', 'not-an-address'] })
    expect(r.success).toBe(false)
    const err = new InputValidationError(r.error!)
    expect(err.message).toBe('Not an e-mail address: not-an-address')
    // API clients still get the exact path.
    expect(err.issues.map((i) => i.path)).toEqual(['to.1'])
  })
})

describe('issueText: zod messages in words', () => {
  it('keeps a schema’s own message as it is', () => {
    expect(issueText('serial', 'serial must have at least 3 characters')).toBe('serial must have at least 3 characters')
    expect(issueText('to.0', 'Not an e-mail address: x')).toBe('Not an e-mail address: x')
  })

  it('writes zod’s generic wording with the field and the list item, never the raw path', () => {
    expect(issueText('ambientC', 'Invalid input: expected number, received NaN')).toBe('ambientC must be a number')
    expect(issueText('name', 'Invalid input: expected string, received undefined')).toBe('name is required')
    expect(issueText('subscribers.2', 'Too small: expected string to have >=1 characters')).toBe('subscribers, item 3: Too small: expected string to have >=1 characters')
    expect(issueText('coil.awg', 'Too big: expected number to be <=40')).toBe('coil awg: Too big: expected number to be <=40')
    expect(issueText('', 'Invalid input')).toBe('Invalid input')
  })
})
