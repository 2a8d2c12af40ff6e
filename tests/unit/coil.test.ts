import { describe, expect, it } from 'vitest'
import { RATED_IMPEDANCE_MIN_FRACTION } from '../../server/analysis/index.ts'
import {
  AWG_MAX,
  AWG_MIN,
  AWG_TABLE,
  COPPER_RESISTIVITY_20C_OHM_MM2_PER_M,
  awgFormulaDiameterMm,
  awgSize,
  coilSchema,
  expectedRe20Ohm,
  expectedRe20OhmOf,
  reDisagreementPct,
  reDisagrees,
  type Coil,
} from '../../shared/utils/coil.ts'

const FEET_PER_M = 1 / 0.3048 // international foot, exact
const MM2_PER_CMIL = (Math.PI / 4) * 0.0254 ** 2 // 1 circular mil = π/4 · (0.001 in)²

describe('AWG table (ASTM B258)', () => {
  // ASTM B258-02, Table 1, nominal bare diameters in mils as published (rounded to 0.0001 in),
  // transcribed in the public repository d-b-w-gain/Electrical, file B258-02-T1.csv.
  const B258_MILS: [number, number][] = [
    [20, 32.0], [21, 28.5], [22, 25.3], [23, 22.6], [24, 20.1], [25, 17.9], [26, 15.9], [27, 14.2],
    [28, 12.6], [29, 11.3], [30, 10.0], [31, 8.9], [32, 8.0], [33, 7.1], [34, 6.3], [35, 5.6],
    [36, 5.0], [37, 4.5], [38, 4.0], [39, 3.5], [40, 3.1],
  ]

  it('covers AWG 20 to 40', () => {
    expect(Object.keys(AWG_TABLE).map(Number)).toEqual(B258_MILS.map(([n]) => n))
    expect([AWG_MIN, AWG_MAX]).toEqual([20, 40])
  })

  it.each(B258_MILS)('AWG %i: nominal diameter %f mils, as ASTM B258-02 Table 1 tabulates it', (awg, mils) => {
    expect(awgSize(awg).diameterIn * 1000).toBeCloseTo(mils, 6)
    expect(awgSize(awg).diameterMm).toBeCloseTo((mils / 1000) * 25.4, 9)
  })

  it.each([
    // Same transcription, cross-sections in mm² (three significant figures, from the rounded diameters).
    [24, 0.205],
    [30, 0.0507],
    [31, 0.0401],
  ])('AWG %i: cross-section %f mm² as ASTM B258-02 Table 1', (awg, mm2) => {
    expect(awgSize(awg).areaMm2 / mm2).toBeCloseTo(1, 2)
  })

  it.each([
    // The unrounded AWG definition against the usual four-figure metric AWG table (from memory:
    // 24 AWG 0.5106 mm, 30 AWG 0.2546 mm, 31 AWG 0.2268 mm) and against HyperPhysics "Wire Gauge
    // and Current Limits" (hyperphysics.phy-astr.gsu.edu/hbase/Tables/wirega.html, data from
    // Floyd, Electric Circuit Fundamentals): 0.0201 in, 0.01002 in, 0.00893 in.
    [24, 0.5106, 0.0201],
    [30, 0.2546, 0.01002],
    [31, 0.2268, 0.00893],
  ])('AWG %i: the definition gives %f mm (%f in)', (awg, mm, inches) => {
    expect(awgFormulaDiameterMm(awg)).toBeCloseTo(mm, 4)
    // HyperPhysics prints four significant figures (its last digit may be off by one): 0.1 %.
    expect(Math.abs(awgFormulaDiameterMm(awg) / 25.4 / inches - 1)).toBeLessThan(1e-3)
  })

  it('anchors the definition at 36 AWG = 0.005 in = 0.127 mm (ASTM B258)', () => {
    expect(awgFormulaDiameterMm(36)).toBe(0.127)
    expect(awgSize(36).diameterIn).toBe(0.005)
  })

  it.each([
    // HyperPhysics (same page), Ω per 1000 ft of annealed copper at 20 °C, computed there from the
    // unrounded diameters: 24 AWG 25.67, 30 AWG 103.2, 31 AWG 130.1 → 0.08422, 0.3386, 0.4268 Ω/m.
    [24, 25.67],
    [30, 103.2],
    [31, 130.1],
  ])('AWG %i: resistance per metre agrees with %f Ω/1000 ft (HyperPhysics)', (awg, ohmPerKft) => {
    const reference = (ohmPerKft / 1000) * FEET_PER_M
    const fromDefinition = COPPER_RESISTIVITY_20C_OHM_MM2_PER_M / ((Math.PI / 4) * awgFormulaDiameterMm(awg) ** 2)
    expect(fromDefinition / reference).toBeCloseTo(1, 3)
    // The table uses B258's rounded diameter: within 1 % of the unrounded figure for these gauges.
    expect(Math.abs(awgSize(awg).ohmPerM / reference - 1)).toBeLessThan(0.01)
  })

  it('gives 31 AWG about 0.43 Ω/m (0.4268 Ω/m unrounded per HyperPhysics; 0.4296 Ω/m from B258 0.0089 in)', () => {
    expect(awgSize(31).ohmPerM).toBeCloseTo(0.4296, 4)
  })

  it('doubles the resistance every three gauges (common practice)', () => {
    expect(awgSize(31).ohmPerM / awgSize(28).ohmPerM).toBeCloseTo(2, 1)
    expect(awgSize(24).ohmPerM / awgSize(21).ohmPerM).toBeCloseTo(2, 1)
  })

  it.each([19, 41, 30.5])('refuses AWG %f (outside the table)', (awg) => {
    expect(() => awgSize(awg)).toThrow(RangeError)
  })
})

describe('copper resistivity (IEC 60028)', () => {
  it('is 1/58 Ω·mm²/m = 0.017241 Ω·mm²/m at 20 °C', () => {
    // IEC 60028 (International Annealed Copper Standard): 1/58 Ω·mm²/m at 20 °C.
    expect(COPPER_RESISTIVITY_20C_OHM_MM2_PER_M).toBeCloseTo(0.017241, 6)
    expect(1 / COPPER_RESISTIVITY_20C_OHM_MM2_PER_M).toBeCloseTo(58, 9)
  })

  it('is the 10.37 Ω per circular mil-foot of the imperial wire tables', () => {
    // pearen.ca "Copper Wire Table: AWG to Metric": "Copper wire resistance is 10.37 ohms per circular mil per foot".
    const ohmCmilPerFt = (COPPER_RESISTIVITY_20C_OHM_MM2_PER_M / MM2_PER_CMIL) / FEET_PER_M
    expect(ohmCmilPerFt).toBeCloseTo(10.37, 2)
  })
})

describe('expected Re at 20 °C', () => {
  // A four-layer 31 AWG copper coil on a 1-inch (25.4 mm) bore former with a 0.1 mm wall
  // (outer Ø 25.6 mm), wire about 0.25 mm over its enamel (from memory: heavy-build 31 AWG
  // magnet wire is about 0.0098 in overall). Mean turn diameter = 25.6 + 4 × 0.25 = 26.6 mm;
  // 45 turns a layer, 180 in all, a winding about 11 mm high.
  const woofer: Coil = { awg: 31, turns: 180, meanDiameterMm: 26.6, layers: 4, strands: 1 }

  it('gives about 6.5 Ω for a four-layer 31-gauge coil of a 5.25-inch 8 Ω woofer (check value: common practice, no source)', () => {
    const re = expectedRe20Ohm(woofer)
    // 180 · π · 0.0266 m = 15.04 m of wire × 0.4296 Ω/m = 6.46 Ω.
    expect(re).toBeCloseTo(6.46, 2)
    expect(Math.abs(re / 6.5 - 1)).toBeLessThan(0.05)
  })

  it('such a coil satisfies the rated-impedance rule of IEC 60268-5 for 8 Ω (minimum ≥ 80 % of rated = 6.4 Ω)', () => {
    // IEC 60268-5, rated impedance: the modulus must nowhere fall below 80 % of the rated value;
    // above Fs the minimum sits above Re, so Re itself must clear 6.4 Ω.
    expect(RATED_IMPEDANCE_MIN_FRACTION).toBe(0.8)
    expect(RATED_IMPEDANCE_MIN_FRACTION * 8).toBeCloseTo(6.4, 12)
    expect(6.5).toBeGreaterThanOrEqual(RATED_IMPEDANCE_MIN_FRACTION * 8)
    expect(expectedRe20Ohm(woofer)).toBeGreaterThanOrEqual(RATED_IMPEDANCE_MIN_FRACTION * 8)
    // …and a 3-layer version of the same winding height would not (135 turns: 4.85 Ω).
    expect(expectedRe20Ohm({ ...woofer, turns: 135, layers: 3 })).toBeLessThan(RATED_IMPEDANCE_MIN_FRACTION * 8)
  })

  it('is the same for the wire length as for turns × π × mean diameter', () => {
    const lengthM = (180 * Math.PI * 26.6) / 1000
    expect(expectedRe20Ohm({ awg: 31, lengthM, layers: 4, strands: 1 })).toBeCloseTo(expectedRe20Ohm(woofer), 12)
  })

  it('is R = ρ·L/A: 10 m of 36 AWG (0.127 mm) is 13.61 Ω (hand calculation)', () => {
    // A = π/4 · 0.127² = 0.012668 mm²; 0.017241 · 10 / 0.012668 = 13.610 Ω.
    expect(expectedRe20Ohm({ awg: 36, lengthM: 10, layers: 2, strands: 1 })).toBeCloseTo(13.61, 2)
  })

  it('divides by the strands wound in parallel, and does not depend on the layers', () => {
    const one = expectedRe20Ohm(woofer)
    expect(expectedRe20Ohm({ ...woofer, strands: 2 })).toBeCloseTo(one / 2, 12)
    expect(expectedRe20Ohm({ ...woofer, layers: 2 })).toBeCloseTo(one, 12)
  })

  it('answers null for an unfinished form and a figure once the coil is complete', () => {
    expect(expectedRe20OhmOf({ awg: 31, layers: 4 })).toBeNull()
    expect(expectedRe20OhmOf({ awg: 31, layers: 4, turns: 180 })).toBeNull()
    expect(expectedRe20OhmOf({ awg: 31, layers: 4, turns: 180, meanDiameterMm: 26.6 })).toBeCloseTo(6.46, 2)
  })
})

describe('coilSchema', () => {
  it('fills in one strand', () => {
    expect(coilSchema.parse({ awg: 31, lengthM: 15, layers: 4 }).strands).toBe(1)
  })

  it.each([
    ['both a length and turns', { awg: 31, lengthM: 15, turns: 180, meanDiameterMm: 26.6, layers: 4 }, 'lengthM'],
    ['neither a length nor turns', { awg: 31, layers: 4 }, 'lengthM'],
    ['turns without a mean diameter', { awg: 31, turns: 180, layers: 4 }, 'meanDiameterMm'],
    ['a mean diameter without turns', { awg: 31, meanDiameterMm: 26.6, layers: 4 }, 'turns'],
    ['a gauge below the table', { awg: 19, lengthM: 15, layers: 4 }, 'awg'],
    ['a gauge above the table', { awg: 41, lengthM: 15, layers: 4 }, 'awg'],
    ['a fractional gauge', { awg: 30.5, lengthM: 15, layers: 4 }, 'awg'],
    ['no layers', { awg: 31, lengthM: 15 }, 'layers'],
    ['zero strands', { awg: 31, lengthM: 15, layers: 4, strands: 0 }, 'strands'],
    ['a negative length', { awg: 31, lengthM: -1, layers: 4 }, 'lengthM'],
  ])('refuses %s (issue at %s)', (_label, value, path) => {
    const r = coilSchema.safeParse(value)
    expect(r.success).toBe(false)
    expect(r.error!.issues.map((i) => i.path.join('.'))).toContain(path)
  })
})

describe('Re disagreement', () => {
  it.each([
    [6.5, 7.15, 10],
    [6.5, 5.85, -10],
    [8, 8, 0],
  ])('expected %f Ω, golden mean %f Ω: %f %', (expected, measured, pct) => {
    expect(reDisagreementPct(expected, measured)).toBeCloseTo(pct, 9)
  })

  it('warns only beyond the threshold, either way', () => {
    expect(reDisagrees(6.5, 7.0, 10)).toBe(false) // +7.7 %
    expect(reDisagrees(6.5, 7.2, 10)).toBe(true) // +10.8 %
    expect(reDisagrees(6.5, 5.8, 10)).toBe(true) // −10.8 %
    expect(reDisagrees(6.5, 7.0, 5)).toBe(true)
  })

  it('refuses an expected Re of 0 Ω', () => {
    expect(() => reDisagreementPct(0, 6.5)).toThrow(RangeError)
  })
})
