import { describe, expect, it } from 'vitest'
import { formatWhen } from '../../utils/format-when'

describe('formatWhen: one way to write a moment', () => {
  // Built from local parts, so the check holds in any time zone the test runs in.
  const iso = new Date(2026, 11, 2, 5, 31, 9).toISOString()

  it('writes local date and 24-hour time, zero-padded', () => {
    expect(formatWhen(iso)).toBe('2026-12-02 05:31')
    expect(formatWhen(new Date(2026, 0, 9, 17, 4, 0).toISOString())).toBe('2026-01-09 17:04')
  })

  it('adds seconds where asked', () => {
    expect(formatWhen(iso, { seconds: true })).toBe('2026-12-02 05:31:09')
  })

  it('writes a dash, or the given word, for no moment or an unreadable one', () => {
    expect(formatWhen(null)).toBe('–')
    expect(formatWhen(undefined, { empty: 'never' })).toBe('never')
    expect(formatWhen('not a date')).toBe('–')
  })
})
