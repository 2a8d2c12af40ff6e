/**
 * Stage condition: DC removal before anything else reads the channels. An interface's input offset
 * up to 5 % of full scale on any channel must leave every figure at its clean twin's (issue
 * tolerance: Fs and Re within 0.1 %, sensitivity within 0.05 dB, THD max within 0.1 point).
 */
import { describe, expect, it } from 'vitest'
import { analyzeRecording, DEFAULT_PROFILE, generateSweep, type AnalysisResult } from '../../../server/analysis/index.ts'
import { estimateDc } from '../../../server/analysis/stages/condition.ts'
import { encodeWav, gaussian, mulberry32, simulateStation } from '../../../fixtures/generator.ts'
import { relErr } from './helpers.ts'

/** The station's WAV file of a simulated good unit, with `dc` (fraction of full scale) added to one channel. */
function recordingWithDc(channel: number | null, dc: number): Uint8Array {
  const sim = simulateStation({ seed: 14 })
  const normalised = sim.channels.map((x, c) => {
    const g = 1 / sim.profile.fullScaleV[c]!
    const offset = c === channel ? dc : 0
    return Float64Array.from(x, (v) => v * g + offset)
  })
  return new Uint8Array(encodeWav(normalised, sim.sampleRate, 'pcm24'))
}

describe('condition: a DC offset on any channel leaves the figures at the clean twin’s', () => {
  const clean = analyzeRecording(recordingWithDc(null, 0), DEFAULT_PROFILE)
  const roles = DEFAULT_PROFILE.channels

  it('the clean twin is measured (a comparison against nulls would prove nothing)', () => {
    expect(clean.parameters.fsHz).toBeGreaterThan(0)
    expect(clean.parameters.reOhm).toBeGreaterThan(0)
    expect(clean.parameters.sensitivityDb).not.toBeNull()
    expect(clean.parameters.thdMaxPct).not.toBeNull()
  })

  it.each(roles.flatMap((role, c) => [[role, '+5 %', c, 0.05] as const, [role, '−5 %', c, -0.05] as const]))(
    '%s channel with a DC offset of %s of full scale',
    (_role, _label, c, dc) => {
      const r: AnalysisResult = analyzeRecording(recordingWithDc(c, dc), DEFAULT_PROFILE)
      const p = r.parameters
      expect(relErr(p.fsHz, clean.parameters.fsHz!), 'Fs').toBeLessThan(0.001)
      expect(relErr(p.reOhm, clean.parameters.reOhm!), 'Re').toBeLessThan(0.001)
      expect(Math.abs(p.sensitivityDb! - clean.parameters.sensitivityDb!), 'sensitivity').toBeLessThan(0.05)
      expect(p.thdMaxPct!, 'THD max').toBeLessThanOrEqual(clean.parameters.thdMaxPct! + 0.1)
      expect(r.flags.polarity).toBe(clean.flags.polarity)
      expect(r.timingsMs.condition).toBeGreaterThanOrEqual(0)
    },
  )
})

describe('estimateDc: the offset from the channel’s silence, not from its signal', () => {
  const fs = 48_000
  const sweep = { ...DEFAULT_PROFILE.sweep }
  const pre = Math.round(sweep.preSilenceS * fs)
  const s = generateSweep(sweep, fs, 0.5)
  const tail = Math.round(0.3 * fs)
  const n = pre + s.length + tail
  const withOffset = (dc: number): Float64Array => {
    const x = new Float64Array(n).fill(dc)
    for (let i = 0; i < s.length; i++) x[pre + i]! += s[i]!
    return x
  }
  const blockLen = Math.round(0.01 * fs)

  it('finds a 5 % offset to 1e-9 while the plain mean is off by the sweep’s own mean', () => {
    const x = withOffset(0.05)
    expect(Math.abs(estimateDc(x, n, blockLen) - 0.05)).toBeLessThan(1e-9)
    let mean = 0
    for (const v of x) mean += v / n
    // The sweep's slow start leaves a mean of its own: why the plain mean is not the estimate.
    expect(Math.abs(mean - 0.05)).toBeGreaterThan(1e-6)
  })

  it('reads 0 on a clean channel, so a recording without an offset is left as it was', () => {
    expect(estimateDc(withOffset(0), n, blockLen)).toBe(0)
  })

  it('leaves an offset within the noise’s own mean alone, and finds one above it', () => {
    const noise = gaussian(mulberry32(7))
    const noisy = (dc: number): Float64Array => {
      const x = withOffset(dc)
      for (let i = 0; i < n; i++) x[i]! += 1e-4 * noise()
      return x
    }
    // 1e-4 RMS noise over ~17 000 silent frames: a standard error near 8e-7.
    expect(estimateDc(noisy(0), n, blockLen)).toBe(0)
    expect(Math.abs(estimateDc(noisy(1e-3), n, blockLen) - 1e-3)).toBeLessThan(5e-6)
  })

  it('averages mains hum in the silence out (60 Hz at 10 % of the offset moves it by under 1 %)', () => {
    const x = withOffset(0.02)
    for (let i = 0; i < n; i++) x[i]! += 0.002 * Math.sin((2 * Math.PI * 60 * i) / fs + 0.3)
    expect(Math.abs(estimateDc(x, n, blockLen) - 0.02)).toBeLessThan(0.0002)
  })

  it('falls back to the mean of every frame when the channel has no silence', () => {
    const x = Float64Array.from({ length: 48_000 }, (_, i) => 0.01 + 0.3 * Math.sin((2 * Math.PI * 1000 * i) / fs))
    let mean = 0
    for (const v of x) mean += v / x.length
    expect(estimateDc(x, x.length, blockLen)).toBeCloseTo(mean, 12)
  })
})
