/**
 * Verdicts that hold on a real line: every unit class under every disturbance a line adds, at the
 * extremes the product promises to tolerate (README, "What the station must provide"), judged by
 * the real judge with a realistic mask around the clean good unit. A good unit keeps its clean
 * twin's verdict (or `retest` where the disturbance really keeps the recording from deciding: pink
 * noise, a knock) and never fails; its figures stay with its twin's. A defective unit still fails,
 * on the check its defect belongs to.
 */
import { describe, expect, it } from 'vitest'
import { analyzeRecording, modelImpedance, rfft, type AnalysisResult } from '../../../server/analysis/index.ts'
import { failedCheckNames, judge, type Judgement } from '../../../server/verdict/judge.ts'
import {
  analysisSetup,
  cleanTwin,
  disturbedRecording,
  pinkNoise,
  recordingFile,
  UNIT_CLASSES,
  unitModel,
  warmDriver,
  type LineDisturbance,
  type UnitClass,
} from '../../../fixtures/disturbances.ts'
import type { SimulatedRecording } from '../../../fixtures/generator.ts'
import { maskAround, RATED_OHM } from './line-mask.ts'
import { relErr } from './helpers.ts'

const SEED = 14

/** The issue's tolerances for a good unit against its twin: Fs, Re (20 °C), Qts 0.5 %; sensitivity 0.2 dB. */
const FIGURE_TOL = 0.005
const SENSITIVITY_TOL_DB = 0.2

interface Row {
  label: string
  d: LineDisturbance
  /** The disturbance may really keep the recording from deciding: a good unit may end `retest`. */
  mayRetest: boolean
}

// The extremes of the issue's table ("Tolerances, on your own fixtures").
const DISTURBANCES: Row[] = [
  { label: 'hum 50 Hz −45 dBFS on the mic', d: { kind: 'hum', channel: 'mic', mainsHz: 50, levelDbfs: -45 }, mayRetest: false },
  { label: 'hum 60 Hz −45 dBFS on the mic', d: { kind: 'hum', channel: 'mic', mainsHz: 60, levelDbfs: -45 }, mayRetest: false },
  { label: 'hum 50 Hz −65 dBFS on the current', d: { kind: 'hum', channel: 'sense', mainsHz: 50, levelDbfs: -65 }, mayRetest: false },
  { label: 'hum 60 Hz −65 dBFS on the current', d: { kind: 'hum', channel: 'sense', mainsHz: 60, levelDbfs: -65 }, mayRetest: false },
  { label: 'DC +5 % FS on the mic', d: { kind: 'dc', channel: 'mic', fraction: 0.05 }, mayRetest: false },
  { label: 'DC −5 % FS on the drive', d: { kind: 'dc', channel: 'drive', fraction: -0.05 }, mayRetest: false },
  { label: 'DC +5 % FS on the current', d: { kind: 'dc', channel: 'sense', fraction: 0.05 }, mayRetest: false },
  { label: 'pink noise −55 dBFS on the mic', d: { kind: 'pink', levelDbfs: -55 }, mayRetest: true },
  // 0.15 s into the sweep is about 56 Hz, where the cone moves most and rub and buzz lives; 0.5 s is about 630 Hz.
  { label: 'knock −10 dB at 0.15 s', d: { kind: 'knock', levelDb: -10, atS: 0.15 }, mayRetest: true },
  { label: 'knock −10 dB at 0.5 s', d: { kind: 'knock', levelDb: -10, atS: 0.5 }, mayRetest: true },
  { label: 'clock +200 ppm', d: { kind: 'drift', ppm: 200 }, mayRetest: false },
  { label: 'clock −200 ppm', d: { kind: 'drift', ppm: -200 }, mayRetest: false },
  { label: 'sweep 0.5 s late', d: { kind: 'latency', shiftS: 0.5 }, mayRetest: false },
  { label: 'sweep 0.5 s early', d: { kind: 'latency', shiftS: -0.5 }, mayRetest: false },
  { label: 'level +6 dB', d: { kind: 'level', db: 6 }, mayRetest: false },
  { label: 'level −6 dB', d: { kind: 'level', db: -6 }, mayRetest: false },
  { label: 'room 10 °C', d: { kind: 'warm', ambientC: 10 }, mayRetest: false },
  { label: 'room 40 °C', d: { kind: 'warm', ambientC: 40 }, mayRetest: false },
]

/** The check each defect must fail on. */
const DEFECT_CHECK: Record<Exclude<UnitClass, 'good'>, string> = {
  rub_buzz: 'rubBuzzDb',
  low_sensitivity: 'sensitivityDb',
  fs_high: 'fsHz',
  re_high: 're20Ohm',
  inverted_polarity: 'polarity',
  open_coil: 'coil',
  shorted_coil: 'coil',
}

// Clean twins, per unit class and recording profile (latency rows have their own), simulated once.
const twins = new Map<string, { sim: SimulatedRecording; result: AnalysisResult }>()
function twinOf(unit: UnitClass, d: LineDisturbance = { kind: 'none' }) {
  const key = `${unit}/${d.kind === 'latency' ? 'latency' : 'default'}`
  let t = twins.get(key)
  if (!t) {
    const sim = cleanTwin(unit, SEED, d)
    const setup = analysisSetup(d.kind === 'latency' ? d : { kind: 'none' })
    t = { sim, result: analyzeRecording(new Uint8Array(recordingFile(sim)), setup.profile, setup.options) }
    twins.set(key, t)
  }
  return t
}

function analyzeDisturbed(unit: UnitClass, d: LineDisturbance): AnalysisResult {
  const twin = d.kind === 'level' || d.kind === 'warm' ? undefined : twinOf(unit, d).sim
  const setup = analysisSetup(d)
  return analyzeRecording(new Uint8Array(recordingFile(disturbedRecording(unit, d, SEED, twin))), setup.profile, setup.options)
}

const mask = maskAround(twinOf('good').result)
const judged = (r: AnalysisResult): Judgement => judge(r, mask, RATED_OHM)

/** What a judgement read, for failure messages: the failed and undecided checks with their values. */
function explain(j: Judgement, r: AnalysisResult): string {
  const bad = j.checks.filter((c) => !c.pass).map((c) => `${c.name}=${c.value}${c.undecided ? ' (undecided)' : ''}${c.atHz ? ` @${c.atHz} Hz` : ''}`)
  const p = r.parameters
  return `${j.verdict}${j.retestReason ? ` (${j.retestReason})` : ''}; not passed: [${bad.join(', ')}]; THD max ${p.thdMaxPct?.toFixed(2)} % @${p.thdMaxAtHz?.toFixed(0)} Hz, rub and buzz ${p.rubBuzzDb?.toFixed(1)} dB, Fs ${p.fsHz?.toFixed(3)} Hz, Re20 ${p.re20Ohm?.toFixed(4)} Ω, Qts ${p.qts?.toFixed(4)}, sens ${p.sensitivityDb?.toFixed(2)} dB, flags ${JSON.stringify({ open: r.flags.openCoil, short: r.flags.shortedCoil, pol: r.flags.polarity })}`
}

/**
 * A warm coil really is quieter and its Qts really higher (Qes ∝ Re): what the model says the
 * change from 20 °C is. Sensitivity: the mean over the band of 20·log10 |Ze(20 °C)| / |Ze(T)| (the
 * cone's force is Bl·I, and I = V / Ze at the terminals; Small 1972). Qts: its ratio.
 */
function warmChange(unit: UnitClass, tempC: number, band: [number, number]): { sensitivityDb: number; qtsRatio: number } {
  const cold = unitModel(unit).driver
  const warm = warmDriver(cold, tempC)
  const n = 64
  let sum = 0
  for (let i = 0; i < n; i++) {
    const f = band[0] * Math.pow(band[1] / band[0], i / (n - 1))
    sum += 20 * Math.log10(Math.hypot(...modelImpedance(cold, f)) / Math.hypot(...modelImpedance(warm, f)))
  }
  const qts = (d: typeof cold) => (d.qms * d.qes) / (d.qms + d.qes)
  return { sensitivityDb: sum / n, qtsRatio: qts(warm) / qts(cold) }
}

describe('the disturbance generator itself', () => {
  it('pink noise has unit RMS and falls 3 dB per octave (±0.5 dB) from 100 Hz to 10 kHz', () => {
    const n = 1 << 18
    const x = pinkNoise(n, 5)
    expect(Math.sqrt(x.reduce((s, v) => s + v * v, 0) / n)).toBeCloseTo(1, 9)
    const X = rfft(x, n)
    const fs = 48_000
    // Mean power over one octave band, per bin.
    const band = (f0: number) => {
      let s = 0
      let m = 0
      for (let k = Math.ceil((f0 * n) / fs); k < (2 * f0 * n) / fs; k++, m++) s += X[2 * k]! ** 2 + X[2 * k + 1]! ** 2
      return s / m
    }
    for (const f0 of [100, 400, 1600, 5000]) expect(10 * Math.log10(band(2 * f0) / band(f0)), `${f0} Hz`).toBeCloseTo(-3.01, 0)
  })

  it('lays hum, DC and a knock at the levels asked, on the channel asked only', () => {
    const clean = twinOf('good').sim
    const mic = clean.profile.channels.indexOf('mic')
    const diff = (d: LineDisturbance, c: number) => {
      const x = disturbedRecording('good', d, SEED, clean).channels[c]!
      return Float64Array.from(x, (v, i) => v - clean.channels[c]![i]!)
    }
    const peak = (x: Float64Array) => x.reduce((m, v) => Math.max(m, Math.abs(v)), 0)
    // Fundamental, 3rd and 5th at 0, −6, −10 dB: the sum's RMS is a1·√((1 + 10^−0.6 + 10^−1)/2).
    const hum = diff({ kind: 'hum', channel: 'mic', mainsHz: 50, levelDbfs: -45 }, mic)
    const a1 = Math.pow(10, -45 / 20) * clean.profile.fullScaleV[mic]!
    expect(Math.sqrt(hum.reduce((s, v) => s + v * v, 0) / hum.length) / (a1 * Math.sqrt((1 + 10 ** -0.6 + 10 ** -1) / 2))).toBeCloseTo(1, 2)
    expect(peak(diff({ kind: 'hum', channel: 'mic', mainsHz: 50, levelDbfs: -45 }, clean.profile.channels.indexOf('drive')))).toBe(0)
    const dc = diff({ kind: 'dc', channel: 'sense', fraction: 0.05 }, clean.profile.channels.indexOf('sense'))
    expect(dc[100]).toBeCloseTo(0.05 * clean.profile.fullScaleV[clean.profile.channels.indexOf('sense')]!, 12)
    const knock = diff({ kind: 'knock', levelDb: -10, atS: 0.5 }, mic)
    expect(20 * Math.log10(peak(knock) / peak(clean.channels[mic]!))).toBeCloseTo(-10, 6)
  })
})

describe('the disturbance table: its clean twins', () => {
  it('the clean good unit passes its own mask, with no warning', () => {
    const j = judged(twinOf('good').result)
    expect(j.verdict, explain(j, twinOf('good').result)).toBe('pass')
    expect(j.warnings).toEqual([])
  })

  it.each(UNIT_CLASSES.filter((u) => u !== 'good'))('the clean %s unit fails on its defect', (unit) => {
    const r = twinOf(unit).result
    const j = judged(r)
    expect(j.verdict, explain(j, r)).toBe('fail')
    expect(failedCheckNames(j)).toContain(DEFECT_CHECK[unit as Exclude<UnitClass, 'good'>])
  })
})

describe('a good unit on a real line', () => {
  it.each(DISTURBANCES)('$label: its twin’s verdict (never a fail), and its twin’s figures', ({ d, mayRetest }) => {
    const r = analyzeDisturbed('good', d)
    const twin = twinOf('good', d).result
    const j = judged(r)
    const jt = judged(twin)
    expect(j.verdict, explain(j, r)).not.toBe('fail')
    if (mayRetest) expect([jt.verdict, 'retest'], explain(j, r)).toContain(j.verdict)
    else expect(j.verdict, explain(j, r)).toBe(jt.verdict)

    const p = r.parameters
    const t = twin.parameters
    expect(relErr(p.fsHz, t.fsHz!), `Fs ${p.fsHz} vs ${t.fsHz}`).toBeLessThan(FIGURE_TOL)
    // Re referred to 20 °C (IEC 60028): the warm coil's too, against the 20 °C twin.
    expect(relErr(p.re20Ohm, t.re20Ohm!), `Re20 ${p.re20Ohm} vs ${t.re20Ohm}`).toBeLessThan(FIGURE_TOL)
    const warm = d.kind === 'warm' ? warmChange('good', d.ambientC, p.sensitivityBandHz) : { sensitivityDb: 0, qtsRatio: 1 }
    expect(relErr(p.qts, t.qts! * warm.qtsRatio), `Qts ${p.qts} vs ${t.qts! * warm.qtsRatio}`).toBeLessThan(FIGURE_TOL)
    const dSens = (p.sensitivityDb ?? Number.NaN) - (t.sensitivityDb! + warm.sensitivityDb)
    expect(Math.abs(dSens), `sensitivity ${p.sensitivityDb} vs ${t.sensitivityDb! + warm.sensitivityDb}`).toBeLessThan(SENSITIVITY_TOL_DB)
    // A level more than 1 dB off the profile carries a warning (issue 14, §5).
    if (d.kind === 'level') expect(j.warnings.length, explain(j, r)).toBeGreaterThan(0)
  })
})

const DEFECT_ROWS = UNIT_CLASSES.filter((u): u is Exclude<UnitClass, 'good'> => u !== 'good').flatMap((unit) =>
  DISTURBANCES.map((row) => ({ unit, ...row })),
)

/**
 * Where the disturbance really hides the defect, the recording may not decide, but it never passes:
 * hall noise at −55 dBFS peaks above this unit's buzz (−41 dB re the sweep's peak, the noise's own
 * peaks about −28 dB), so it ends `retest` (measure again), never `pass`.
 */
const MAY_RETEST = new Set(['rub_buzz|pink noise −55 dBFS on the mic'])

describe('a defective unit on a real line still fails', () => {
  it.each(DEFECT_ROWS)('$unit with $label fails on its defect', ({ unit, d, label }) => {
    const r = analyzeDisturbed(unit, d)
    const j = judged(r)
    if (MAY_RETEST.has(`${unit}|${label}`) && j.verdict === 'retest') return void expect(j.retestReason, explain(j, r)).not.toBeNull()
    expect(j.verdict, explain(j, r)).toBe('fail')
    expect(failedCheckNames(j), explain(j, r)).toContain(DEFECT_CHECK[unit])
  })
})

describe('a unit that rubs only at its largest excursions', () => {
  // The generator's rubbing coil buzzes only while the cone is within 15 % of its largest
  // excursion: at the bottom of the sweep, in one block, one or two bursts a half-period apart
  // (their middles, not their loudest samples, keep that spacing). Over a dozen seeds it must fail
  // every time, never be taken for a knock.
  const setup = analysisSetup({ kind: 'none' })
  it.each(Array.from({ length: 12 }, (_, i) => i + 1))('seed %i fails on rub and buzz', (seed) => {
    const good = analyzeRecording(new Uint8Array(recordingFile(cleanTwin('good', seed))), setup.profile, setup.options)
    const r = analyzeRecording(new Uint8Array(recordingFile(cleanTwin('rub_buzz', seed))), setup.profile, setup.options)
    const j = judge(r, maskAround(good), RATED_OHM)
    expect(j.verdict, explain(j, r)).toBe('fail')
    expect(failedCheckNames(j), explain(j, r)).toContain('rubBuzzDb')
    expect((r.parameters.disturbances ?? []).some((d) => d.retest), explain(j, r)).toBe(false)
  })
})
