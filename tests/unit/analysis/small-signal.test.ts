import { describe, expect, it } from 'vitest'
import {
  analyzeRecording,
  classicalThreePoint,
  DEFAULT_PROFILE,
  fitSmallSignal,
  logSpaced,
  modelImpedance,
  seedSmallSignal,
  type SmallSignalParams,
} from '../../../server/analysis/index.ts'
import { gaussian, generateRecording, mulberry32 } from '../../../fixtures/generator.ts'
import { relErr } from './helpers.ts'

const magOf = (p: SmallSignalParams, f: number) => Math.hypot(...modelImpedance(p, f))

/** Root of g on [a, b] by bisection (g changes sign). */
function bisect(g: (x: number) => number, a: number, b: number): number {
  let ga = g(a)
  for (let i = 0; i < 200; i++) {
    const m = 0.5 * (a + b)
    const gm = g(m)
    if (Math.sign(gm) === Math.sign(ga)) {
      a = m
      ga = gm
    } else b = m
  }
  return 0.5 * (a + b)
}

describe('classical three-point method (Small, JAES 1972 model, Le = 0)', () => {
  // Worked example, checked by hand from the model: Re 6 Ω, Fs 50 Hz, Qms 4, Qes 0.4 → Zmax 66 Ω,
  // |Z| = √(Re·Zmax) at f1 = 33.398 Hz and f2 = 74.855 Hz; formulas return Qms 4.000, Qes 0.400, Qts 0.364.
  const p: SmallSignalParams = { reOhm: 6, leH: 0, fsHz: 50, qms: 4, qes: 0.4 }

  it('the model gives Zmax 66 Ω and the −3-point frequencies 33.398 / 74.855 Hz', () => {
    expect(magOf(p, 50)).toBeCloseTo(66, 9)
    const level = Math.sqrt(6 * 66)
    const f1 = bisect((f) => magOf(p, f) - level, 10, 50)
    const f2 = bisect((f) => magOf(p, f) - level, 50, 500)
    expect(f1).toBeCloseTo(33.398, 3)
    expect(f2).toBeCloseTo(74.855, 3)
  })

  it('returns Qms 4.000, Qes 0.400, Qts 0.364 from a dense table of the model', () => {
    const freq = logSpaced(10, 1000, 400)
    const c = classicalThreePoint(
      freq,
      freq.map((f) => magOf(p, f)),
      6,
    )!
    expect(c).not.toBeNull()
    expect(c.zmaxOhm).toBeCloseTo(66, 2)
    expect(c.f1Hz).toBeCloseTo(33.398, 2)
    expect(c.f2Hz).toBeCloseTo(74.855, 2)
    expect(c.fsHz).toBeCloseTo(50, 2)
    expect(c.qms).toBeCloseTo(4.0, 3)
    expect(c.qes).toBeCloseTo(0.4, 3)
    expect(c.qts).toBeCloseTo(0.364, 3)
  })
})

describe('least-squares fit recovers the lumped model (Small 1972)', () => {
  // Tolerances (our acceptance bar for the engine): Fs 1 %, Re 1 %, Qms/Qes/Qts 3 %, Le 10 % (no mask
  // limits Le).
  const cases: [string, SmallSignalParams, number][] = [
    ['woofer, realistic Le 0.6 mH, 0.5 % noise', { reOhm: 5.86, leH: 0.0006, fsHz: 41.7, qms: 4.3, qes: 0.38 }, 0.005],
    ['midrange, Le 0.15 mH, 1 % noise', { reOhm: 3.3, leH: 0.00015, fsHz: 85, qms: 2.5, qes: 0.6 }, 0.01],
    ['subwoofer, Le 2 mH, no noise', { reOhm: 3.6, leH: 0.002, fsHz: 24, qms: 7, qes: 0.5 }, 0],
  ]
  it.each(cases)('%s', (_name, p, noise) => {
    const randn = gaussian(mulberry32(11))
    const freq = logSpaced(12, 5000, 48)
    const re: number[] = []
    const im: number[] = []
    for (const f of freq) {
      const [zr, zi] = modelImpedance(p, f)
      const m = Math.hypot(zr, zi)
      re.push(zr + noise * m * randn())
      im.push(zi + noise * m * randn())
    }
    const mag = re.map((r, i) => Math.hypot(r, im[i]!))
    const seeded = seedSmallSignal(freq, re, im, mag)!
    expect(seeded).not.toBeNull()
    const fit = fitSmallSignal({ freqHz: freq, re, im }, seeded.seed)
    expect(relErr(fit.fsHz, p.fsHz)).toBeLessThan(0.01)
    expect(relErr(fit.reOhm, p.reOhm)).toBeLessThan(0.01)
    expect(relErr(fit.qms, p.qms)).toBeLessThan(0.03)
    expect(relErr(fit.qes, p.qes)).toBeLessThan(0.03)
    expect(relErr(fit.qts, (p.qms * p.qes) / (p.qms + p.qes))).toBeLessThan(0.03)
    expect(relErr(fit.leH, p.leH)).toBeLessThan(0.1)
  })

  it('recovers the parameters through the whole station path (synthetic sweep, −90 dBFS noise)', () => {
    const driver = { reOhm: 6.2, leH: 0.00045, fsHz: 55, qms: 3.4, qes: 0.5, blTm: 6.0, sdM2: 0.0125 }
    const r = analyzeRecording(generateRecording({ driver, seed: 5 }), DEFAULT_PROFILE, { ambientC: 30 })
    const q = r.parameters
    expect(relErr(q.fsHz, driver.fsHz)).toBeLessThan(0.01)
    expect(relErr(q.reOhm, driver.reOhm)).toBeLessThan(0.01)
    expect(relErr(q.qms, driver.qms)).toBeLessThan(0.03)
    expect(relErr(q.qes, driver.qes)).toBeLessThan(0.03)
    expect(relErr(q.leMh, driver.leH * 1000)).toBeLessThan(0.1)
    // Copper, IEC 60028: R20 = R_T / (1 + 0.00393·(T − 20))
    expect(q.re20Ohm!).toBeCloseTo(q.reOhm! / (1 + 0.00393 * 10), 9)
    // The classical cross-check stays near the fit.
    expect(relErr(r.classical!.fsHz, q.fsHz!)).toBeLessThan(0.02)
    expect(relErr(r.classical!.qts, q.qts!)).toBeLessThan(0.05)
  })
})
