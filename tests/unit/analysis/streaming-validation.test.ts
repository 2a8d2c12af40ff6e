/**
 * The upload check reads a recording from disk block by block (validateRecordingSource) with the
 * same rules as the in-memory validation (validateRecording): same figures to the last bit, same
 * codes and messages, and never the whole file, nor a decoded copy of it, in memory at once.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import {
  AnalysisInputError,
  DEFAULT_PROFILE,
  VALIDATION_BLOCK_BYTES,
  validateRecording,
  validateRecordingSource,
  type ByteSource,
  type StationProfile,
  type ValidatedRecording,
} from '../../../server/analysis/index.ts'
import { encodeWav, generateRecording } from '../../../fixtures/generator.ts'
import { withFileSource } from '../../../server/storage/file-source.ts'
import { profileWith } from './helpers.ts'

const dir = mkdtempSync(join(tmpdir(), 'conetrail-stream-'))
afterAll(() => rmSync(dir, { recursive: true, force: true }))

/** A recording held in memory, read in pieces, with the largest single read remembered. */
function memorySource(bytes: Uint8Array): ByteSource & { largestRead: number; bytesRead: number } {
  const src = {
    size: bytes.byteLength,
    largestRead: 0,
    bytesRead: 0,
    async read(offset: number, length: number) {
      src.largestRead = Math.max(src.largestRead, length)
      src.bytesRead += length
      return Uint8Array.from(bytes.subarray(offset, offset + length))
    },
  }
  return src
}

type Outcome = { code: string; message: string } | { stats: ValidatedRecording['stats']; frames: number; sampleRate: number; driveSilentWithCurrent: boolean }

function outcomeOf(v: ValidatedRecording): Outcome {
  return { stats: v.stats, frames: v.frames, sampleRate: v.sampleRate, driveSilentWithCurrent: v.driveSilentWithCurrent }
}

function refusal(err: unknown): Outcome {
  if (!(err instanceof AnalysisInputError)) throw err
  return { code: err.code, message: err.message }
}

function inMemory(bytes: Uint8Array, profile: StationProfile): Outcome {
  try {
    return outcomeOf(validateRecording(bytes, profile))
  } catch (err) {
    return refusal(err)
  }
}

async function streamed(src: ByteSource, profile: StationProfile, blockBytes?: number): Promise<Outcome> {
  try {
    return outcomeOf(await validateRecordingSource(src, profile, { blockBytes }))
  } catch (err) {
    return refusal(err)
  }
}

function withNaN(bytes: Uint8Array, at: { frame: number; channel: number }[]): Uint8Array {
  const b = Uint8Array.from(bytes)
  const dv = new DataView(b.buffer)
  for (const { frame, channel } of at) dv.setFloat32(44 + 4 * (3 * frame + channel), Number.NaN, true)
  return b
}

const float32 = generateRecording({ encoding: 'float32', seed: 61 })
const twoChannel = profileWith({ channels: ['mic', 'sense'], fullScaleV: [1, 2] })

const FIXTURES: [string, Uint8Array, StationProfile, string | null][] = [
  ['a good recording (24-bit)', generateRecording({ seed: 60 }), DEFAULT_PROFILE, null],
  ['a good recording (float 32)', float32, DEFAULT_PROFILE, null],
  ['a good recording (16-bit, extensible)', generateRecording({ seed: 62, encoding: 'pcm16', extensible: true }), DEFAULT_PROFILE, null],
  ['a good recording (float 64, 96 kHz)', generateRecording({ seed: 63, encoding: 'float64', sampleRate: 96_000 }), DEFAULT_PROFILE, null],
  ['a good mic + sense recording', generateRecording({ seed: 64, profile: twoChannel }), twoChannel, null],
  ['an open coil', generateRecording({ defect: 'open_coil', seed: 65 }), DEFAULT_PROFILE, null],
  ['a shorted coil (its current clips the sense channel)', generateRecording({ defect: 'shorted_coil', seed: 66 }), DEFAULT_PROFILE, null],
  ['a clipped mic', generateRecording({ defect: 'clipped', seed: 67 }), DEFAULT_PROFILE, 'clipped'],
  ['a silent drive', generateRecording({ defect: 'silent_drive', seed: 68 }), DEFAULT_PROFILE, 'silent_drive'],
  ['a dead drive-voltage probe', generateRecording({ defect: 'dead_drive_probe', seed: 69 }), DEFAULT_PROFILE, 'drive_probe_fault'],
  ['a dead current (sense) lead', generateRecording({ defect: 'dead_sense_probe', seed: 70 }), DEFAULT_PROFILE, 'sense_probe_fault'],
  ['a NaN in the drive channel', withNaN(float32, [{ frame: 40_000, channel: 1 }]), DEFAULT_PROFILE, 'non_finite'],
  // The lowest channel with a bad sample is named, wherever in the file it lies.
  ['NaNs in the sense channel early and the mic late', withNaN(float32, [{ frame: 100, channel: 2 }, { frame: 60_000, channel: 0 }]), DEFAULT_PROFILE, 'non_finite'],
  ['too short for the sweep', generateRecording({ seed: 70 }), profileWith({ sweep: { ...DEFAULT_PROFILE.sweep, durationS: 2 } }), 'too_short'],
  ['two channels for a three-channel profile', generateRecording({ seed: 71, profile: twoChannel }), DEFAULT_PROFILE, 'channel_mismatch'],
  ['cut off in the data', generateRecording({ seed: 72 }).subarray(0, 100_000), DEFAULT_PROFILE, 'truncated'],
  ['a 22.05 kHz file', encodeWav([new Float64Array(30_000), new Float64Array(30_000), new Float64Array(30_000)], 22_050), DEFAULT_PROFILE, 'sample_rate_out_of_range'],
]

describe('validation from a file gives what validation in memory gives', () => {
  it.each(FIXTURES)('%s', { timeout: 60_000 }, async (_name, bytes, profile, code) => {
    const expected = inMemory(bytes, profile)
    expect('code' in expected ? expected.code : null).toBe(code)
    // Blocks of an odd size that is no multiple of a frame, and of one byte less than a frame: the
    // block is cut down to whole frames, so every boundary lands somewhere else.
    expect(await streamed(memorySource(bytes), profile, 4099)).toEqual(expected)
    expect(await streamed(memorySource(bytes), profile, 8)).toEqual(expected)
    const path = join(dir, `${_name.replace(/\W+/g, '-')}.wav`)
    writeFileSync(path, bytes)
    expect(await withFileSource(path, (file) => streamed(file, profile))).toEqual(expected)
  })

  it('fills the decoded channels, when asked, exactly as the in-memory validation decodes them', async () => {
    const bytes = generateRecording({ seed: 73 })
    const mine = validateRecording(bytes, DEFAULT_PROFILE)
    const theirs = await validateRecordingSource(memorySource(bytes), DEFAULT_PROFILE, { keepChannels: true, blockBytes: 5000 })
    for (const role of ['mic', 'drive', 'sense'] as const) expect(theirs.channels[role]).toEqual(mine.channels[role])
  }, 60_000)

  it('keeps no decoded copy and never reads more than one block at once', async () => {
    // 3 channels × 4 bytes × 1.35 s × 192 kHz: about 3.1 MB, several blocks.
    const bytes = generateRecording({ seed: 74, encoding: 'float32', sampleRate: 192_000 })
    expect(bytes.byteLength).toBeGreaterThan(2.5 * VALIDATION_BLOCK_BYTES)
    const src = memorySource(bytes)
    const v = await validateRecordingSource(src, DEFAULT_PROFILE)
    expect(v.channels).toEqual({})
    expect(src.largestRead).toBeLessThanOrEqual(VALIDATION_BLOCK_BYTES)
    // Every sample byte is read once; the headers once more at most.
    expect(src.bytesRead).toBeLessThan(bytes.byteLength + 2 * 64 * 1024)
  }, 60_000)

  it('refuses a file that ends while it is read (it changed on disk)', async () => {
    const bytes = generateRecording({ seed: 75 })
    const src = memorySource(bytes)
    const short: ByteSource = { size: src.size, read: async (o, l) => (await src.read(o, l)).subarray(0, o >= 44 ? l - 1 : l) }
    expect(await streamed(short, DEFAULT_PROFILE)).toMatchObject({ code: 'truncated' })
  })
})
