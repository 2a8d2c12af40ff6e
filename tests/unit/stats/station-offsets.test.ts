import { describe, expect, it } from 'vitest'
import { stationOffsets, type CheckDifference } from '../../../server/stats/station-offsets'

const d = (stationId: number, figure: string, difference: number, toleranceWidth: number | null = 10): CheckDifference => ({ stationId, stationName: `S${stationId}`, figure, difference, toleranceWidth })

describe('station offsets', () => {
  it('gives the mean difference with its Student-t interval', () => {
    // Differences 0.5, 0.7, 0.6: mean 0.6, s = 0.1; t(0.975; 2) = 4.303 (Student-t table, NIST/SEMATECH
    // e-Handbook 1.3.6.7.2), so the 95 % interval is 0.6 ± 4.303 · 0.1 / √3 = 0.6 ± 0.2484.
    const [o] = stationOffsets([d(1, 'fsHz', 0.5), d(1, 'fsHz', 0.7), d(1, 'fsHz', 0.6)])
    expect(o).toMatchObject({ stationId: 1, figure: 'fsHz', n: 3 })
    expect(o!.offset).toBeCloseTo(0.6, 12)
    expect(o!.sd).toBeCloseTo(0.1, 12)
    expect(o!.ci![0]).toBeCloseTo(0.6 - 0.2484, 3)
    expect(o!.ci![1]).toBeCloseTo(0.6 + 0.2484, 3)
    expect(o!.shareOfTolerance).toBeCloseTo(0.06, 12)
    expect(o!.warn).toBe(false)
  })

  it('warns above a tenth of the tolerance, groups by station and figure, and gives no interval from one check', () => {
    const rows = stationOffsets([d(2, 'fsHz', 1.5), d(2, 'fsHz', 1.3), d(1, 'sensitivityDb', -0.1, 2), d(1, 'fsHz', 0.2), d(2, 're20Ohm', 0.01, null)])
    expect(rows.map((r) => [r.stationName, r.figure, r.n])).toEqual([['S1', 'fsHz', 1], ['S1', 'sensitivityDb', 1], ['S2', 'fsHz', 2], ['S2', 're20Ohm', 1]])
    expect(rows[0]!.ci).toBeNull()
    expect(rows[2]).toMatchObject({ warn: true })
    expect(rows[2]!.shareOfTolerance).toBeCloseTo(0.14, 12)
    // A limit the engineer set carries no tolerance width: no share, no warning.
    expect(rows[3]).toMatchObject({ toleranceWidth: null, shareOfTolerance: null, warn: false })
  })

  it('refuses a warning share or confidence outside (0, 1)', () => {
    expect(() => stationOffsets([], { warnShare: 0 })).toThrow(/between 0 and 1/)
    expect(() => stationOffsets([], { confidence: 1 })).toThrow(/between 0 and 1/)
  })
})
