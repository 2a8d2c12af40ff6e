/**
 * The analysis reads at most MAX_ANALYSIS_FRAMES of a recording (a worker's memory is bounded by
 * its transform length): a longer file is read over pre-silence, sweep and ANALYSIS_TAIL_S, and a
 * sweep that does not fit at its rate is refused. Figures checked against the generator's driver
 * (fixtures/generator.ts DEMO_DRIVER, the Thiele-Small model of Small, JAES 1972).
 */
import { describe, expect, it } from 'vitest'
import {
  ANALYSIS_TAIL_S,
  AnalysisInputError,
  DEFAULT_PROFILE,
  MAX_ANALYSIS_FRAMES,
  analysisFrames,
  analyzeRecording,
  validateRecording,
} from '../../../server/analysis/index.ts'
import { DEMO_DRIVER, generateRecording } from '../../../fixtures/generator.ts'

/** The same recording with `frames` of digital silence appended (the generator's canonical 44-byte header: RIFF size at 4, data size at 40). */
function withSilence(wav: Buffer, frames: number): Buffer {
  const blockAlign = wav.readUInt16LE(32)
  const out = Buffer.concat([wav, Buffer.alloc(frames * blockAlign)])
  out.writeUInt32LE(out.length - 8, 4)
  out.writeUInt32LE(wav.readUInt32LE(40) + frames * blockAlign, 40)
  return out
}

describe('the span the analysis reads', () => {
  it('reads a recording whole when it fits, and crops only a longer one after the sweep', () => {
    expect(analysisFrames(48_000 * 2, 48_000, 48_000)).toBe(96_000)
    expect(analysisFrames(MAX_ANALYSIS_FRAMES + 1, 48_000, 48_000)).toBe(48_000 + ANALYSIS_TAIL_S * 48_000)
  })

  it('measures a recording with 25 s of silence after its sweep like its short twin, from no more than it needs', () => {
    const short = generateRecording({ seed: 41 })
    const long = withSilence(short, 25 * 48_000)
    const v = validateRecording(long, DEFAULT_PROFILE)
    expect(v.frames).toBeGreaterThan(MAX_ANALYSIS_FRAMES)
    const sweepEnd = Math.round((DEFAULT_PROFILE.sweep.preSilenceS + DEFAULT_PROFILE.sweep.durationS) * v.sampleRate)
    expect(v.analysisFrames).toBe(sweepEnd + ANALYSIS_TAIL_S * v.sampleRate)
    expect(v.channels.mic!.length).toBe(v.analysisFrames)
    const a = analyzeRecording(v, DEFAULT_PROFILE).parameters
    const b = analyzeRecording(short, DEFAULT_PROFILE).parameters
    expect(a.fsHz! / DEMO_DRIVER.fsHz).toBeCloseTo(1, 2)
    expect(Math.abs(a.fsHz! / b.fsHz! - 1)).toBeLessThan(0.005)
    expect(Math.abs(a.reOhm! / b.reOhm! - 1)).toBeLessThan(0.005)
    expect(Math.abs(a.sensitivityDb! - b.sensitivityDb!)).toBeLessThan(0.2)
  })

  it('refuses a sweep longer than the analysis reads at its rate: recording_too_long', () => {
    // 6 s of sweep at 192 kHz: 1.16 M frames before the tail. The header claims 192 kHz over enough
    // frames; the refusal comes from the layout and the profile, before any sample is read as sound.
    const profile = { ...DEFAULT_PROFILE, sweep: { ...DEFAULT_PROFILE.sweep, durationS: 6 } }
    const wav = withSilence(generateRecording({ seed: 42 }), 1_200_000)
    wav.writeUInt32LE(192_000, 24)
    wav.writeUInt32LE(192_000 * wav.readUInt16LE(32), 28)
    let code: string | undefined
    try {
      validateRecording(wav, profile)
    } catch (err) {
      code = err instanceof AnalysisInputError ? err.code : 'other'
    }
    expect(code).toBe('recording_too_long')
  })
})
