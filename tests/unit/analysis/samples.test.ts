/**
 * Outside check: reference recordings made by an independent driver model (../shared/samples,
 * truth.json). Tolerances are ours, stated beside each check.
 */
import { readFileSync } from 'node:fs'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { analyzeImpedanceTable, analyzeRecording, DEFAULT_PROFILE, valueAtHz, type AnalysisResult } from '../../../server/analysis/index.ts'
import { readSample, readTruth, relErr, samplesDir } from './helpers.ts'

const truth = readTruth()
const results = new Map<string, AnalysisResult>()
const analyzeSample = (name: string): AnalysisResult => {
  let r = results.get(name)
  if (!r) {
    r = analyzeRecording(readSample(name), DEFAULT_PROFILE)
    results.set(name, r)
  }
  return r
}

describe.each(['S6-00-0001.wav', 'S6-00-0002.wav', 'S6-00-0004.wav'])('reference recording %s', (name) => {
  const t = truth[name]!
  it('small-signal parameters match the truth (Re, Fs 0.5 %; Qms, Qes, Qts 2 %; Le 5 %; Zmax 1 %)', () => {
    const p = analyzeSample(name).parameters
    expect(relErr(p.reOhm, t.params.Re)).toBeLessThan(0.005)
    expect(relErr(p.fsHz, t.params.Fs)).toBeLessThan(0.005)
    expect(relErr(p.qms, t.params.Qms)).toBeLessThan(0.02)
    expect(relErr(p.qes, t.params.Qes)).toBeLessThan(0.02)
    expect(relErr(p.qts, t.params.Qts)).toBeLessThan(0.02)
    expect(relErr(p.leMh, t.params.Le * 1000)).toBeLessThan(0.05)
    expect(relErr(p.zmaxOhm, t.Zmax_ohm!)).toBeLessThan(0.01)
    expect(relErr(p.zminOhm, t.impedance!.Zmin_above_Fs_ohm)).toBeLessThan(0.01)
  })

  it('SPL at 2.83 V / 1 m matches the one-third-octave truth within 0.5 dB up to 16 kHz', () => {
    const r = analyzeSample(name)
    for (const [f, db] of t.spl_third_octave_db!) {
      if (f < 25 || f > 16_000) continue // the sweep's fades: judge 25 Hz–16 kHz (samples README)
      const v = valueAtHz(r.curves.freqHz, r.curves.splDb!, f)
      expect(Math.abs(v! - db), `${f} Hz`).toBeLessThan(0.5)
    }
    expect(Math.abs(r.parameters.sensitivityDb! - t.mean_spl_300_3000_db!)).toBeLessThan(0.5)
  })

  it('THD at 100 Hz, 1 kHz, 3 kHz within 20 % of the steady-sine truth', () => {
    const r = analyzeSample(name)
    for (const [hz, v] of Object.entries(t.thd!)) {
      const row = r.thdAt.find((x) => x.hz === Number(hz))!
      expect(relErr(row.thdPct, v.thd_percent), `${hz} Hz`).toBeLessThan(0.2)
      expect(relErr(row.h2Pct, v.h2_percent), `${hz} Hz H2`).toBeLessThan(0.2)
    }
  })
})

describe('reference recordings: unit faults', () => {
  it('S6-00-0001 (good unit): polarity normal, no rub and buzz', () => {
    const r = analyzeSample('S6-00-0001.wav')
    expect(r.flags.polarity).toBe('normal')
    expect(r.flags.rubBuzz).toBe(false)
    expect(r.flags.openCoil).toBe(false)
    expect(r.engineVersion).toMatch(/^\d+\.\d+\.\d+$/)
    expect(r.timingsMs.total).toBeGreaterThan(0)
  })

  it('S6-00-0002 (coil wired backwards): polarity inverted', () => {
    expect(analyzeSample('S6-00-0002.wav').flags.polarity).toBe('inverted')
  })

  it('S6-00-0003 (open coil): a result with the open-coil flag, not an error', () => {
    const r = analyzeSample('S6-00-0003.wav')
    expect(r.flags.openCoil).toBe(true)
    expect(r.flags.shortedCoil).toBe(false)
    expect(r.parameters.fsHz).toBeNull()
    expect(r.curves.splDb).toBeNull()
    expect(r.unmeasured).toContain('small_signal')
  })

  it('S6-00-0004 (rubbing coil) is flagged and 0001 is not, each ≥ 8 dB from the limit', () => {
    const bad = analyzeSample('S6-00-0004.wav').parameters
    const good = analyzeSample('S6-00-0001.wav').parameters
    expect(analyzeSample('S6-00-0004.wav').flags.rubBuzz).toBe(true)
    expect(bad.rubBuzzDb! - bad.rubBuzzLimitDb).toBeGreaterThan(8)
    expect(good.rubBuzzLimitDb - good.rubBuzzDb!).toBeGreaterThan(8)
  })

  it('results are plain JSON (no typed arrays)', () => {
    const r = analyzeSample('S6-00-0001.wav')
    expect(JSON.parse(JSON.stringify(r))).toEqual(r)
  })
})

describe('reference impedance table S6-00-0005.csv', () => {
  const t = truth['S6-00-0005.csv']!
  const r = analyzeImpedanceTable(readFileSync(path.join(samplesDir, 'S6-00-0005.csv'), 'utf8'))
  it('parameters match the truth (Re, Fs 0.5 %; Q 2 %; Le 5 %)', () => {
    const p = r.parameters
    expect(r.kind).toBe('impedance_table')
    expect(relErr(p.reOhm, t.params.Re)).toBeLessThan(0.005)
    expect(relErr(p.fsHz, t.params.Fs)).toBeLessThan(0.005)
    expect(relErr(p.qms, t.params.Qms)).toBeLessThan(0.02)
    expect(relErr(p.qes, t.params.Qes)).toBeLessThan(0.02)
    expect(relErr(p.qts, t.params.Qts)).toBeLessThan(0.02)
    expect(relErr(p.leMh, t.params.Le * 1000)).toBeLessThan(0.05)
    expect(r.curves.splDb).toBeNull()
    expect(r.flags.polarity).toBeNull()
  })
})
