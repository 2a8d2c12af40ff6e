import { describe, expect, it } from 'vitest'
import {
  analyzeImpedanceTable,
  analyzeRecording,
  DEFAULT_PROFILE,
  lowestMeasurableFsHz,
  MIN_START_OCTAVES_BELOW_FS,
  type AnalysisResult,
} from '../../../server/analysis/index.ts'
import { DEMO_DRIVER, generateImpedanceTable, generateRecording, type DriverModel } from '../../../fixtures/generator.ts'
import { profileWith, relErr } from './helpers.ts'

/**
 * A resonance near the bottom of the sweep (a fatigued suspension, a woofer with a low Fs).
 * The generator's unit is the lumped model of Small (JAES 1972), so its Fs and Qms are the truth;
 * tolerances as the other engine tests (our acceptance bar for the engine): Fs 1 %, Qms, Qes and
 * Qts 3 %.
 * Common practice: the sweep starts at least about half an octave below Fs for a trustworthy Fs
 * and Qms, so with the demo's 20 Hz sweep the engine reports Fs from 20·√2 ≈ 28.3 Hz up.
 */
const SWEEP_START_HZ = DEFAULT_PROFILE.sweep.f1Hz
const SMALL_SIGNAL = ['reOhm', 'fsHz', 'qms', 'qes', 'qts', 'leMh', 'zmaxOhm', 'fitErrorPct'] as const

function unit(fsHz: number, qms: number): DriverModel {
  return { ...DEMO_DRIVER, fsHz, qms }
}

function expectFigures(r: AnalysisResult, d: DriverModel): void {
  const p = r.parameters
  expect(relErr(p.fsHz, d.fsHz)).toBeLessThan(0.01)
  expect(relErr(p.qms, d.qms)).toBeLessThan(0.03)
  expect(relErr(p.qes, d.qes)).toBeLessThan(0.03)
  expect(relErr(p.qts, (d.qms * d.qes) / (d.qms + d.qes))).toBeLessThan(0.03)
  expect(relErr(p.reOhm, d.reOhm)).toBeLessThan(0.01)
  expect(r.unmeasured).not.toContain('small_signal')
  expect(r.notes.join(' ')).not.toMatch(/resonance/i)
}

function expectWithheld(r: AnalysisResult, note: RegExp): void {
  for (const k of SMALL_SIGNAL) expect(r.parameters[k], k).toBeNull()
  expect(r.classical).toBeNull()
  expect(r.parameters.zminOhm).toBeNull()
  expect(r.unmeasured).toContain('small_signal')
  expect(r.notes.filter((n) => /resonance/i.test(n))).toEqual([expect.stringMatching(note)])
}

describe('the lowest Fs reported', () => {
  it('is half an octave above the start (common practice), and above the first fitted points', () => {
    expect(MIN_START_OCTAVES_BELOW_FS).toBe(0.5)
    expect(lowestMeasurableFsHz(20, 23.4)).toBeCloseTo(20 * Math.SQRT2, 9)
    // Data starting well above the sweep start: at least a sixth of an octave of flank below Fs.
    expect(lowestMeasurableFsHz(5, 10)).toBeCloseTo(10 * Math.pow(2, 1 / 6), 9)
  })
})

describe('sweep from 20 Hz, resonance near the bottom (Small 1972 model as truth)', () => {
  it.each([
    [28.5, 4.1],
    [30, 4.1],
    [33, 8],
    [37, 4.1],
    [45, 2],
  ])('Fs %s Hz, Qms %s: measured within tolerance', (fsHz, qms) => {
    const d = unit(fsHz, qms)
    const r = analyzeRecording(generateRecording({ driver: d, seed: 61 }), DEFAULT_PROFILE)
    expectFigures(r, d)
  })

  it.each([25, 28])('Fs %s Hz: less than half an octave above the sweep start, no figures', (fsHz) => {
    const r = analyzeRecording(generateRecording({ driver: unit(fsHz, 4.1), seed: 62 }), DEFAULT_PROFILE)
    expectWithheld(r, /less than half an octave above the sweep start \(20\.0 Hz\): start the sweep at 1\d\.\d Hz or lower/)
    // The note names where the resonance lies and a start half an octave below it.
    const near = Number(/near (\d+\.\d) Hz/.exec(r.notes.join(' '))![1])
    expect(Math.abs(near - fsHz)).toBeLessThanOrEqual(0.1)
  })

  it.each([16, 20, 22])('Fs %s Hz: at or below the lowest valid frequency, no figures', (fsHz) => {
    const r = analyzeRecording(generateRecording({ driver: unit(fsHz, 4.1), seed: 63 }), DEFAULT_PROFILE)
    expectWithheld(r, /^Resonance at or below the sweep's lowest valid frequency \(2\d\.\d Hz\): start the sweep lower\.$/)
  })

  it('a sweep started lower measures the same unit', () => {
    const d = unit(25, 4.1)
    const profile = profileWith({ sweep: { ...DEFAULT_PROFILE.sweep, f1Hz: 10 } })
    expect(25).toBeGreaterThan(lowestMeasurableFsHz(profile.sweep.f1Hz, 1.2 * profile.sweep.f1Hz))
    expectFigures(analyzeRecording(generateRecording({ driver: d, seed: 64, profile }), profile), d)
  })

  it('the limit follows the sweep start: Fs just either side of 20·√2 Hz', () => {
    const limit = lowestMeasurableFsHz(SWEEP_START_HZ, 1.2 * SWEEP_START_HZ)
    const above = analyzeRecording(generateRecording({ driver: unit(limit * 1.01, 4.1), seed: 65 }), DEFAULT_PROFILE)
    expect(relErr(above.parameters.fsHz, limit * 1.01)).toBeLessThan(0.01)
    const below = analyzeRecording(generateRecording({ driver: unit(limit * 0.99, 4.1), seed: 65 }), DEFAULT_PROFILE)
    expect(below.parameters.fsHz).toBeNull()
  })
})

describe('impedance table from 20 Hz, resonance near the bottom', () => {
  const table = (d: DriverModel, withPhase = true) =>
    analyzeImpedanceTable(generateImpedanceTable({ driver: d, fMinHz: 20, noise: 0.002, seed: 66, withPhase }))

  it.each([
    [30, 4.1, true],
    [33, 8, true],
    [30, 4.1, false],
    [45, 2, false],
  ])('Fs %s Hz, Qms %s, phase %s: measured within tolerance', (fsHz, qms, withPhase) => {
    const d = unit(fsHz, qms)
    expectFigures(table(d, withPhase), d)
  })

  it.each([
    [22, true],
    [27, true],
    [25, false],
  ])('Fs %s Hz (phase %s): less than half an octave above the first frequency, no figures', (fsHz, withPhase) => {
    expectWithheld(table(unit(fsHz, 4.1), withPhase), /less than half an octave above the table's first frequency \(20\.0 Hz\): export the table from 1\d\.\d Hz or lower/)
  })

  it.each([
    [14, true],
    [18, false],
  ])('Fs %s Hz (phase %s): at or below the first frequency, no figures', (fsHz, withPhase) => {
    expectWithheld(table(unit(fsHz, 4.1), withPhase), /^Resonance at or below the table's lowest frequency \(20\.0 Hz\): export the table from lower down\.$/)
  })
})
