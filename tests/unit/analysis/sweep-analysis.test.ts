import { describe, expect, it } from 'vitest'
import {
  analyzeImpedanceTable,
  analyzeRecording,
  DEFAULT_PROFILE,
  generateSweep,
  harmonicDelayS,
  irfft,
  nextPowerOfTwo,
  rfft,
} from '../../../server/analysis/index.ts'
import { DEMO_DRIVER as DEMO_DRIVER_FOR_TESTS, generateImpedanceTable, generateRecording } from '../../../fixtures/generator.ts'
import { profileWith, relErr } from './helpers.ts'

describe('harmonic separation (Farina, AES preprint 5093, 2000)', () => {
  // The k-th harmonic impulse arrives T·ln(k)/ln(f2/f1) ahead of the linear one.
  const sweep = DEFAULT_PROFILE.sweep
  const fs = 48000
  it.each([
    [2, (x: number) => x * x],
    [3, (x: number) => x * x * x],
  ] as const)('order %i lands at T·ln(k)/ln(f2/f1)', (k, nl) => {
    const x = generateSweep(sweep, fs, 1)
    const N = nextPowerOfTwo(2 * x.length)
    const X = rfft(x, N)
    const Y = rfft(Float64Array.from(x, nl), N)
    let maxP = 0
    for (let i = 0; i < X.length; i += 2) maxP = Math.max(maxP, X[i]! ** 2 + X[i + 1]! ** 2)
    const H = new Float64Array(X.length)
    for (let i = 0; i < X.length; i += 2) {
      const d = X[i]! ** 2 + X[i + 1]! ** 2 + 1e-6 * maxP
      H[i] = (Y[i]! * X[i]! + Y[i + 1]! * X[i + 1]!) / d
      H[i + 1] = (Y[i + 1]! * X[i]! - Y[i]! * X[i + 1]!) / d
    }
    const h = irfft(H, N)
    // strongest negative-time peak beyond 20 ms ahead of the linear response
    let best = 0
    let at = 0
    for (let i = N / 2; i < N - Math.round(0.02 * fs); i++) {
      if (Math.abs(h[i]!) > best) {
        best = Math.abs(h[i]!)
        at = N - i
      }
    }
    expect(Math.abs(at / fs - harmonicDelayS(k, sweep))).toBeLessThan(0.001)
    expect(harmonicDelayS(2, sweep)).toBeCloseTo((1.0 * Math.log(2)) / Math.log(1000), 12)
  })

  it('THD of a memoryless polynomial matches the closed form within 1 dB', () => {
    // y = x + a2·x² + a3·x³ driven at amplitude A: H2 = a2·A²/2, H3 = a3·A³/4, fundamental A + 3·a3·A³/4
    // (power-reduction identities). A tiny sense resistor makes the terminal voltage the full sweep.
    const a2 = 0.02
    const a3 = 0.01
    const A = Math.SQRT2 * 2.0
    const profile = profileWith({ channels: ['mic', 'drive'], fullScaleV: [1, 20], senseResistorOhm: 1e-6 })
    const bytes = generateRecording({ profile, memorylessPressure: (v) => v + a2 * v * v + a3 * v * v * v, seed: 2 })
    const r = analyzeRecording(bytes, profile, { thdAtHz: [100, 300, 1000, 2000] })
    const fund = A + 0.75 * a3 * A ** 3
    const h2 = (100 * (a2 * A * A) / 2) / fund
    const h3 = (100 * (a3 * A ** 3) / 4) / fund
    const db = (a: number, b: number) => Math.abs(20 * Math.log10(a / b))
    for (const row of r.thdAt) {
      expect(db(row.h2Pct!, h2), `H2 at ${row.hz} Hz`).toBeLessThan(1)
      expect(db(row.h3Pct!, h3), `H3 at ${row.hz} Hz`).toBeLessThan(1)
      expect(db(row.thdPct!, Math.hypot(h2, h3)), `THD at ${row.hz} Hz`).toBeLessThan(1)
    }
  })
})

describe('synthetic station recordings (fixtures/generator.ts)', () => {
  it('a good unit: parameters, polarity normal, no rub and buzz, every figure measured', () => {
    const r = analyzeRecording(generateRecording({ seed: 21 }), DEFAULT_PROFILE)
    const d = DEMO_DRIVER_FOR_TESTS
    expect(relErr(r.parameters.fsHz, d.fsHz)).toBeLessThan(0.01)
    expect(relErr(r.parameters.reOhm, d.reOhm)).toBeLessThan(0.01)
    expect(r.flags.polarity).toBe('normal')
    expect(r.flags.rubBuzz).toBe(false)
    expect(r.unmeasured).toEqual([])
    expect(r.parameters.snrDb.mic!).toBeGreaterThan(40)
    // acoustic delay r/c = 0.1 m / 343 m/s ≈ 0.29 ms (c ≈ 343 m/s at 20 °C: √(κ·R·T) with the ISO 2533 dry-air constants)
    expect(r.parameters.acousticDelayMs!).toBeGreaterThan(0.2)
    expect(r.parameters.acousticDelayMs!).toBeLessThan(0.6)
  })

  it('inverted polarity is reported', () => {
    expect(analyzeRecording(generateRecording({ defect: 'inverted_polarity', seed: 22 }), DEFAULT_PROFILE).flags.polarity).toBe('inverted')
  })

  it('an open coil is a unit fault with a result', () => {
    const r = analyzeRecording(generateRecording({ defect: 'open_coil', seed: 23 }), DEFAULT_PROFILE)
    expect(r.flags.openCoil).toBe(true)
    expect(r.parameters.effectiveImpedanceOhm!).toBeGreaterThan(1000)
  })

  it('a shorted coil is a unit fault with a result, even though its current clips the sense channel', () => {
    const r = analyzeRecording(generateRecording({ defect: 'shorted_coil', seed: 24 }), DEFAULT_PROFILE)
    expect(r.flags.shortedCoil).toBe(true)
    expect(r.flags.openCoil).toBe(false)
    expect(r.curves.impedanceOhm).toBeNull()
  })

  it('rub and buzz separates rubbing units from good ones by a clear margin', () => {
    const levels = (defect: 'none' | 'rub_buzz') =>
      [31, 32, 33].map((seed) => analyzeRecording(generateRecording({ defect, seed }), DEFAULT_PROFILE).parameters)
    const good = levels('none')
    const bad = levels('rub_buzz')
    for (const p of good) expect(p.rubBuzzLimitDb - p.rubBuzzDb!).toBeGreaterThan(5)
    for (const p of bad) expect(p.rubBuzzDb! - p.rubBuzzLimitDb).toBeGreaterThan(5)
  })

  it('a clipped recording can be analysed on request, with the channel flagged', () => {
    const r = analyzeRecording(generateRecording({ defect: 'clipped', seed: 25 }), DEFAULT_PROFILE, { allowClipped: true })
    expect(r.flags.clippedChannels).toEqual(['mic'])
  })

  it.each([44_100, 96_000])('any rate in range works: %i Hz', (sampleRate) => {
    const r = analyzeRecording(generateRecording({ sampleRate, seed: 26 }), DEFAULT_PROFILE)
    expect(r.sampleRateHz).toBe(sampleRate)
    expect(relErr(r.parameters.fsHz, DEMO_DRIVER_FOR_TESTS.fsHz)).toBeLessThan(0.01)
  })

  it('mic + drive only: acoustic result, impedance unmeasured', () => {
    const profile = profileWith({ channels: ['drive', 'mic'], fullScaleV: [20, 1] })
    const r = analyzeRecording(generateRecording({ profile, seed: 27 }), profile)
    expect(r.curves.splDb).not.toBeNull()
    expect(r.curves.impedanceOhm).toBeNull()
    expect(r.unmeasured).toContain('impedance')
    expect(r.flags.polarity).toBe('normal')
  })

  it('no drive channel: the stimulus is regenerated and impedance still measured from mic + sense', () => {
    const profile = profileWith({ channels: ['mic', 'sense'], fullScaleV: [1, 2] })
    const r = analyzeRecording(generateRecording({ profile, seed: 28 }), profile)
    expect(relErr(r.parameters.fsHz, DEMO_DRIVER_FOR_TESTS.fsHz)).toBeLessThan(0.01)
    expect(relErr(r.parameters.reOhm, DEMO_DRIVER_FOR_TESTS.reOhm)).toBeLessThan(0.01)
    expect(r.flags.polarity).toBe('normal')
  })

  it('16-bit and float 64 files give the same Fs as 24-bit', () => {
    const fs24 = analyzeRecording(generateRecording({ seed: 29 }), DEFAULT_PROFILE).parameters.fsHz!
    for (const encoding of ['pcm16', 'float64'] as const) {
      const fs = analyzeRecording(generateRecording({ seed: 29, encoding, extensible: true }), DEFAULT_PROFILE).parameters.fsHz!
      expect(relErr(fs, fs24)).toBeLessThan(0.002)
    }
  })
})

describe('impedance tables in every accepted layout', () => {
  it.each([
    ['comma, header, phase', { separator: ',' }],
    ['tab, comments', { separator: '\t', comments: true }],
    ['whitespace, no header', { separator: ' ', header: false }],
    ['semicolon with decimal commas', { separator: ';', decimalComma: true }],
    ['magnitude only, noisy', { withPhase: false, noise: 0.003 }],
  ] as const)('%s', (_name, spec) => {
    const r = analyzeImpedanceTable(generateImpedanceTable({ ...spec, seed: 5 }), { ambientC: 25 })
    const d = DEMO_DRIVER_FOR_TESTS
    expect(relErr(r.parameters.fsHz, d.fsHz)).toBeLessThan(0.01)
    expect(relErr(r.parameters.reOhm, d.reOhm)).toBeLessThan(0.01)
    expect(relErr(r.parameters.qts, (d.qms * d.qes) / (d.qms + d.qes))).toBeLessThan(0.03)
    expect(r.parameters.re20Ohm!).toBeLessThan(r.parameters.reOhm!)
  })
})
