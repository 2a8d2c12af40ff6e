import { describe, expect, it } from 'vitest'
import { expectedRe20Ohm } from '../../shared/utils/coil'
import {
  DEFAULT_SCENARIO_SEED,
  EXPECTED_CHECK,
  FAULTS,
  GOLDEN_PER_PRODUCT,
  PRODUCTS,
  STATIONS,
  faultMix,
  faulty,
  planScenario,
  toDriverModel,
} from '../../seeds/demo/scenario.ts'

const plan = planScenario()

describe('demo scenario plan', () => {
  it('is deterministic for a seed and differs for another', () => {
    expect(JSON.stringify(planScenario(DEFAULT_SCENARIO_SEED))).toBe(JSON.stringify(plan))
    expect(JSON.stringify(planScenario(DEFAULT_SCENARIO_SEED + 1))).not.toBe(JSON.stringify(plan))
  })

  it('has about 240 units with unique serials in our own format', () => {
    expect(plan.units.length).toBe(PRODUCTS.reduce((n, p) => n + p.lots.reduce((m, l) => m + l.units, 0), 0))
    expect(plan.units.length).toBeGreaterThanOrEqual(200)
    expect(plan.units.length).toBeLessThanOrEqual(300)
    expect(new Set(plan.units.map((u) => u.serial)).size).toBe(plan.units.length)
    for (const u of plan.units) expect(u.serial).toMatch(/^QB(6W|5W|4F)-\d{4}-\d{4}$/)
  })

  it('plants exactly the faults each product asks for, 6–10 % of units in all', () => {
    const mix = faultMix(plan)
    for (const p of PRODUCTS) {
      for (const f of p.faults) expect(mix[p.code]![f.fault]).toBe(f.count)
      const lotBound = p.faults.filter((f) => f.lotIndex !== undefined)
      for (const f of lotBound) {
        const lots = new Set(plan.units.filter((u) => u.productCode === p.code && u.fault === f.fault).map((u) => u.lotCode))
        expect([...lots]).toEqual([`QB${p.serialTag}-${p.lots[f.lotIndex!]!.number}`])
      }
    }
    const faulted = plan.units.filter((u) => u.fault).length / plan.units.length
    expect(faulted).toBeGreaterThanOrEqual(0.06)
    expect(faulted).toBeLessThanOrEqual(0.1)
    // Every fault the line knows appears somewhere, and each names the check that should catch it.
    expect(new Set(plan.units.map((u) => u.fault).filter(Boolean))).toEqual(new Set(FAULTS))
    for (const f of FAULTS) expect(EXPECTED_CHECK[f]).toBeTruthy()
  })

  it('takes golden units from the first lot, fault-free, tested before the mask', () => {
    for (const p of PRODUCTS) {
      const golden = plan.units.filter((u) => u.productCode === p.code && u.golden)
      expect(golden.length).toBe(GOLDEN_PER_PRODUCT)
      for (const u of golden) {
        expect(u.fault).toBeNull()
        expect(u.lotCode).toBe(`QB${p.serialTag}-${p.lots[0]!.number}`)
        expect(u.tests[0]!.phase).toBe('golden')
        expect(u.tests[0]!.atMin).toBeLessThan(plan.maskReleaseAtMin)
      }
    }
    const unjudged = plan.units.flatMap((u) => u.tests).filter((t) => t.phase === 'before_mask')
    expect(unjudged.length).toBe(PRODUCTS.reduce((n, p) => n + p.unjudged, 0))
    for (const t of unjudged) expect(t.atMin).toBeLessThan(plan.maskReleaseAtMin)
  })

  it('tests production units after the mask, each unit in time order, within the span', () => {
    for (const u of plan.units) {
      const times = u.tests.map((t) => t.atMin)
      expect(times).toEqual([...times].sort((a, b) => a - b))
      for (const t of u.tests) {
        expect(t.atMin).toBeGreaterThanOrEqual(0)
        expect(t.atMin).toBeLessThanOrEqual(plan.spanMin)
        if (t.phase === 'production') expect(t.atMin).toBeGreaterThan(plan.maskReleaseAtMin)
        if (t.station) expect(STATIONS.map((s) => s.name)).toContain(t.station)
      }
    }
  })

  it('includes retests (reworked leads now pass) and lab impedance tables', () => {
    const retests = plan.units.filter((u) => u.tests.filter((t) => t.kind === 'sweep').length > 1)
    expect(retests.length).toBeGreaterThanOrEqual(5)
    const reworked = retests.filter((u) => u.fault === 'swapped_leads')
    expect(reworked.length).toBeGreaterThan(0)
    for (const u of reworked) {
      expect(u.tests[0]!.defect).toBe('inverted_polarity')
      expect(u.tests.at(-1)!.defect).toBe('none')
    }
    const tables = plan.units.flatMap((u) => u.tests).filter((t) => t.kind === 'impedance_table')
    expect(tables.length).toBe(2 * PRODUCTS.length)
    for (const t of tables) expect([t.station, t.by]).toEqual([null, 'engineer'])
  })
})

describe('fault physics', () => {
  const w165 = PRODUCTS[0]!
  const nominal = toDriverModel(w165.nominal, 20)

  it('derives Fs, Qms and Qes from the parts (Small 1972)', () => {
    // Fs = 1/(2π√(Mms·Cms)) = 1/(2π√(0.015 · 0.001)) = 1/(2π · 0.0038730) = 41.09 Hz.
    expect(nominal.fsHz).toBeCloseTo(41.09, 2)
    // Qms = ω0·Mms/Rms = 258.20 · 0.015 / 0.9 = 4.303.
    expect(nominal.qms).toBeCloseTo(4.303, 3)
    // Re rises with copper's 0.393 %/K (IEC 60028): at 30 °C, 6.8 · 1.0393 = 7.067 Ω.
    expect(toDriverModel(w165.nominal, 30).reOhm).toBeCloseTo(7.0672, 4)
  })

  it('moves the figure each fault should move', () => {
    const model = (f: (typeof FAULTS)[number]) => toDriverModel(faulty(w165.nominal, f, w165.code).parts, 20)
    // Stiff spider: Cms × 0.55 → Fs × 1/√0.55 = 1.348.
    expect(model('stiff_spider').fsHz / nominal.fsHz).toBeCloseTo(1.3484, 3)
    // One AWG gauge thinner: resistance × 92^(2/39) = 1.2610 (AWG series of ASTM B258; the rule of
    // thumb "three gauges double the resistance", 2^(1/3) = 1.2599, agrees).
    expect(model('wrong_wire').reOhm / nominal.reOhm).toBeCloseTo(1.261, 3)
    expect(toDriverModel(faulty(PRODUCTS[2]!.nominal, 'wrong_wire', 'F100-4').parts, 20).reOhm).toBeLessThan(PRODUCTS[2]!.nominal.re20Ohm)
    // Weak magnet: Bl × 0.8, so Qes = ω0·Mms·Re/Bl² grows by 1/0.64 = 1.5625.
    expect(model('weak_magnet').qes / nominal.qes).toBeCloseTo(1.5625, 4)
    expect(faulty(w165.nominal, 'swapped_leads', w165.code).defect).toBe('inverted_polarity')
    expect(faulty(w165.nominal, 'rubbing_coil', w165.code).defect).toBe('rub_buzz')
    expect(faulty(w165.nominal, 'open_coil', w165.code).defect).toBe('open_coil')
    expect(faulty(w165.nominal, null, w165.code)).toEqual({ parts: w165.nominal, defect: 'none' })
  })
})

describe('demo voice coils', () => {
  it.each(PRODUCTS.map((p) => [p.code, p] as const))('%s: the coil as designed gives its nominal Re within 1 %', (_code, p) => {
    // Expected Re from the wire (ASTM B258 diameter, IEC 60028 copper): the seed's units are built around the same value.
    expect(Math.abs(expectedRe20Ohm(p.coil) - p.nominal.re20Ohm) / p.nominal.re20Ohm).toBeLessThan(0.01)
  })
})
