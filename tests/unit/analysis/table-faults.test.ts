/**
 * Impedance tables from which a unit cannot be passed: each must show its fault (a unit fault is a
 * fail) or leave the figures unmeasured (then the recording is refused, see the judge), never look
 * like a good unit. Coil thresholds are the engine's (OPEN_COIL_OHM, SHORTED_COIL_OHM: our own,
 * far outside any driver's range); the good table is the generator's Thiele-Small model
 * (Small, "Closed-box loudspeaker systems", JAES 1972, the driver's impedance near resonance).
 */
import { readFileSync } from 'node:fs'
import { describe, expect, it } from 'vitest'
import { analyzeImpedanceTable } from '../../../server/analysis/index'
import { generateImpedanceTable } from '../../../fixtures/generator'
import { judge } from '../../../server/verdict/judge'
import { maskLimitsSchema } from '../../../shared/utils/mask'
import { requiredTableBand, tableCoverageProblem } from '../../../server/verdict/table-coverage'

const flat = (ohm: number, from = 10, to = 20_000, n = 200) =>
  Array.from({ length: n }, (_, i) => `${(from * Math.pow(to / from, i / (n - 1))).toFixed(3)},${ohm}`).join('\n')

const limits = maskLimitsSchema.parse({ scalars: { re20Ohm: { low: 5, high: 7 }, fsHz: { low: 30, high: 60 }, qts: { low: 0.2, high: 0.6 } } })
const judged = (text: string) => {
  const a = analyzeImpedanceTable(text, { ambientC: 20 })
  // Rated 6 Ω: the generator's driver (Re 5.9 Ω) has its minimum near 5.94 Ω, above 80 % of 6 Ω (IEC 60268-5).
  return { a, j: judge(a, limits, 6) }
}

describe('impedance tables that show no driver', () => {
  it('reads a good table as a driver: a resonance, no coil fault', () => {
    const { a, j } = judged(generateImpedanceTable())
    expect(a.flags).toMatchObject({ openCoil: false, shortedCoil: false, noResonance: false })
    expect(a.parameters.fsHz).not.toBeNull()
    expect(j.verdict).toBe('pass')
  })

  it('fails a flat 8 Ω table (a resistor, or a blocked cone) on its missing resonance', () => {
    const { a, j } = judged(flat(8))
    expect(a.flags.noResonance).toBe(true)
    expect(a.parameters.fsHz).toBeNull()
    expect(j.verdict).toBe('fail')
    expect(j.checks.find((c) => c.name === 'resonance')).toMatchObject({ pass: false })
  })

  it('fails a dead short (0.01 Ω) and an open circuit (1 MΩ) on the coil check', () => {
    const short = judged(flat(0.01))
    expect(short.a.flags.shortedCoil).toBe(true)
    expect(short.j.checks.find((c) => c.name === 'coil')).toMatchObject({ pass: false })
    const open = judged(flat(1e6))
    expect(open.a.flags.openCoil).toBe(true)
    expect(open.j.checks.find((c) => c.name === 'coil')).toMatchObject({ pass: false })
  })

  it('leaves Fs unmeasured, not failed, for a table that starts above the resonance: the judge cannot pass it', () => {
    const { a, j } = judged(generateImpedanceTable({ fMinHz: 200 }))
    expect(a.flags.noResonance).toBe(false)
    expect(a.parameters.fsHz).toBeNull()
    expect(j.verdict).not.toBe('pass')
    expect(j.undecided).toContain('fsHz')
  })

  it('reads the outside sample table as a driver (independent model, ../shared/samples)', () => {
    const { a } = judged(readFileSync(new URL('../../../../shared/samples/S6-00-0005.csv', import.meta.url), 'utf8'))
    expect(a.flags).toMatchObject({ openCoil: false, shortedCoil: false, noResonance: false })
    expect(a.parameters.fsHz).not.toBeNull()
  })
})

describe('the band an impedance table must cover', () => {
  const product = { sensitivityBandHz: [300, 3000] as const }
  it('starts half an octave below the lowest Fs the mask allows and reaches the top of the response band', () => {
    const [from, to] = requiredTableBand(product, limits)
    expect(from).toBeCloseTo(30 / Math.SQRT2, 9)
    expect(to).toBe(3000)
    expect(tableCoverageProblem([10, 20_000], [from, to])).toBeNull()
    expect(tableCoverageProblem([200, 20_000], [from, to])).toMatch(/starts at 200 Hz; .* 21\.2 Hz or lower/)
    expect(tableCoverageProblem([10, 2000], [from, to])).toMatch(/ends at 2000 Hz; .* reach 3000 Hz/)
  })
  it('has no lower bound without a mask that limits Fs (the engine then withholds a resonance at the bottom)', () => {
    expect(requiredTableBand(product, null)).toEqual([null, 3000])
    expect(tableCoverageProblem([200, 20_000], requiredTableBand(product, null))).toBeNull()
  })
})
