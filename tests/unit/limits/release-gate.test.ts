import { describe, expect, it } from 'vitest'
import { MIN_KNOWN_GOOD, gateShare, shareInWords } from '../../../server/services/masks'

// The release gate's figure in words: "1 in N" is 1/share rounded (arithmetic), and a share
// whose 1/share rounds to 1 says so in words rather than "1 good unit in 1".
describe('shareInWords', () => {
  it('says a small share as a percentage and one unit in N', () => {
    expect(shareInWords(0.024)).toBe('2.4 % (about 1 good unit in 42)')
    expect(shareInWords(0.0003)).toBe('0.03 % (about 1 good unit in 3333)')
  })
  it('never says one good unit in one', () => {
    expect(shareInWords(0.8)).toBe('80.0 % (most good units)')
    expect(shareInWords(1)).toBe('100.0 % (all good units)')
    expect(shareInWords(0.5)).toBe('50.0 % (about 1 good unit in 2)')
  })
  it('gives only the figure for no share at all', () => {
    expect(shareInWords(0)).toBe('0.00 %')
  })
})

// The gate reads the larger of two figures, so a draft that fails none of the known-good units
// (which include the golden units and units the current mask passed) is still judged by its
// statistical risk from the golden spread.
describe('gateShare', () => {
  it('keeps the golden estimate when the known-good units all pass', () => {
    expect(gateShare({ units: 400, draftFails: 0 }, 0.003)).toEqual({ share: 0.003, basis: 'golden_model' })
  })
  it('takes the known-good share when it is the larger', () => {
    expect(gateShare({ units: 40, draftFails: 4 }, 0.003)).toEqual({ share: 0.1, basis: 'known_good' })
  })
  it('ignores a known-good share on fewer units than the minimum', () => {
    expect(gateShare({ units: MIN_KNOWN_GOOD - 1, draftFails: 10 }, 0.003)).toEqual({ share: 0.003, basis: 'golden_model' })
    expect(gateShare({ units: MIN_KNOWN_GOOD, draftFails: 3 }, 0.003)).toEqual({ share: 0.1, basis: 'known_good' })
  })
})
