import { describe, expect, it } from 'vitest'
import {
  bandCentreHz,
  checkRatedImpedance,
  copperResistanceAt,
  irfft,
  modelImpedance,
  NOMINAL_THIRD_OCTAVE_HZ,
  reAt20C,
  rfft,
  smoothFractionalOctave,
  standardGrid,
} from '../../../server/analysis/index.ts'
import { mulberry32 } from '../../../fixtures/generator.ts'

describe('FFT', () => {
  const rand = mulberry32(42)
  it('round-trips random data (rfft → irfft)', () => {
    for (const n of [8, 1024, 65536]) {
      const x = Float64Array.from({ length: n }, () => rand() * 2 - 1)
      const y = irfft(rfft(x, n), n)
      let err = 0
      for (let i = 0; i < n; i++) err = Math.max(err, Math.abs(y[i]! - x[i]!))
      expect(err).toBeLessThan(1e-12)
    }
  })

  it('agrees with a naive DFT on random data', () => {
    // Definition of the DFT: X[k] = Σ x[n]·e^(−2πikn/N).
    const n = 256
    const x = Float64Array.from({ length: n }, () => rand() * 2 - 1)
    const X = rfft(x, n)
    let err = 0
    for (let k = 0; k <= n / 2; k++) {
      let re = 0
      let im = 0
      for (let j = 0; j < n; j++) {
        re += x[j]! * Math.cos((2 * Math.PI * k * j) / n)
        im -= x[j]! * Math.sin((2 * Math.PI * k * j) / n)
      }
      err = Math.max(err, Math.abs(re - X[2 * k]!), Math.abs(im - X[2 * k + 1]!))
    }
    expect(err).toBeLessThan(1e-9)
  })

  it('zero-pads shorter input', () => {
    const X = rfft([1, 0, 0], 16)
    for (let k = 0; k <= 8; k++) {
      expect(X[2 * k]).toBeCloseTo(1, 12)
      expect(X[2 * k + 1]).toBeCloseTo(0, 12)
    }
  })
})

describe('frequency grid (IEC 61260-1 base-10 series)', () => {
  const grid = standardGrid(20_000)

  it('runs 1/24 octave from 10 Hz to the sweep top', () => {
    expect(grid[0]).toBeCloseTo(10, 9)
    expect(grid[grid.length - 1]!).toBeLessThanOrEqual(20_000)
    // G = 10^(3/10); adjacent points differ by G^(1/24) (IEC 61260-1, 5.2 and 5.4)
    const ratio = Math.pow(Math.pow(10, 3 / 10), 1 / 24)
    for (let i = 1; i < grid.length; i++) expect(grid[i]! / grid[i - 1]!).toBeCloseTo(ratio, 12)
  })

  it.each(NOMINAL_THIRD_OCTAVE_HZ.filter((f) => f >= 20 && f <= 20_000))('hits the nominal one-third-octave centre %s Hz', (nominal) => {
    // IEC 61260-1: nominal values are the exact mid-band frequencies 1000·G^(x/3) rounded;
    // the grid holds every exact one-third-octave mid-band (every 8th point), within the rounding (< 1.5 %).
    const x3 = Math.round(10 * Math.log10(nominal / 1000))
    const exact = bandCentreHz(x3, 3)
    const hit = grid.find((f) => Math.abs(f / exact - 1) < 1e-9)
    expect(hit).toBeDefined()
    expect(Math.abs(hit! / nominal - 1)).toBeLessThan(0.015)
  })

  it('smooths without moving a flat curve and spreads a spike', () => {
    const flat = grid.map(() => 80)
    expect(smoothFractionalOctave(grid, flat, 3, 'power').every((v) => Math.abs(v! - 80) < 1e-9)).toBe(true)
    const spike = grid.map((f) => (Math.abs(f - 1000) < 1e-6 ? 100 : 0))
    const s12 = smoothFractionalOctave(grid, spike, 12, 'linear')
    const s3 = smoothFractionalOctave(grid, spike, 3, 'linear')
    const i1k = grid.findIndex((f) => Math.abs(f - 1000) < 1e-6)
    expect(s3[i1k]!).toBeLessThan(s12[i1k]!)
    expect(s12[i1k]!).toBeLessThan(100)
    expect(s3[i1k + 3]!).toBeGreaterThan(0)
  })
})

describe('copper temperature coefficient (IEC 60028, α = 0.00393 /K)', () => {
  it('6.5 Ω at 20 °C reads 7.01 Ω at 40 °C, and back', () => {
    expect(copperResistanceAt(6.5, 40)).toBeCloseTo(7.01, 2)
    expect(reAt20C(7.011, 40)).toBeCloseTo(6.5, 3)
  })
})

describe('rated impedance (IEC 60268-5: |Z| minimum ≥ 80 % of rated)', () => {
  // Common practice, no source: ~6.5 Ω DC (four layers of 31-gauge copper) makes an 8 Ω woofer.
  const grid = standardGrid(20_000)
  const mags = (reOhm: number) =>
    grid.map((f) => Math.hypot(...modelImpedance({ reOhm, leH: 0.0005, fsHz: 45, qms: 4, qes: 0.45 }, f)))

  it('holds for a 6.5 Ω coil rated 8 Ω', () => {
    const c = checkRatedImpedance(grid, mags(6.5), 8, 45)
    expect(c.limitOhm).toBeCloseTo(6.4, 9)
    expect(c.zminOhm).toBeGreaterThanOrEqual(6.4)
    expect(c.ok).toBe(true)
  })

  it('fails for a 5.0 Ω coil rated 8 Ω', () => {
    expect(checkRatedImpedance(grid, mags(5.0), 8, 45).ok).toBe(false)
  })
})
