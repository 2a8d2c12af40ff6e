import { describe, expect, it } from 'vitest'
import { driftAtLatest, yieldWindow } from '../../server/services/alerts'
import type { Verdict } from '../../shared/utils/verdict'

const v = (s: string): Verdict[] => [...s].map((c) => (c === 'p' ? 'pass' : 'fail'))

describe('low-yield window (newest first)', () => {
  it.each([
    ['fewer units than N: not evaluated', 'ffff', false, false, 0],
    ['4 of 5 at an 80 % threshold: not below', 'fpppp', true, false, 80],
    ['3 of 5: below', 'ffppp', true, true, 60],
    ['only the last N count', 'pppppfffff', true, false, 100],
    ['all failing', 'fffff', true, true, 0],
  ])('%s', (_name, verdicts, evaluated, low, pct) => {
    const w = yieldWindow(v(verdicts), { lastN: 5, minYieldPct: 80 })
    expect(w.evaluated).toBe(evaluated)
    expect(w.low).toBe(low)
    if (evaluated) expect(w.yieldPct).toBe(pct)
  })
})

describe('drift at the latest unit', () => {
  // 20 in-control points alternating around 50 Hz (σ from the moving range ≈ 0.89 Hz), then the latest.
  const base = Array.from({ length: 20 }, (_, i) => 50 + (i % 2 ? 0.5 : -0.5))
  const series = (values: number[]) => [{ label: 'Fs', unit: 'Hz', values, serials: values.map((_, i) => `S${i + 1}`) }]

  it('no warning while in control, and none without a baseline', () => {
    expect(driftAtLatest(series([...base, 50.2]))).toEqual([])
    expect(driftAtLatest(series([50, 70, 50]))).toEqual([])
  })

  it('a point beyond 3σ at the latest unit warns, naming its serial', () => {
    const w = driftAtLatest(series([...base, 56]))
    expect(w).toHaveLength(1)
    expect(w[0]).toContain('unit S21')
    expect(w[0]).toContain('above the upper control limit')
  })

  it('an earlier signal that the latest unit no longer shows is not drift now', () => {
    expect(driftAtLatest(series([...base, 56, 50.1]))).toEqual([])
  })
})
