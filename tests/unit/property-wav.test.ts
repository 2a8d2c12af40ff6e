/**
 * Property-based check of the WAV reader and the fast validation (fast-check): valid RIFF/WAVE
 * files written by wavefile (an independent writer), then mutated the ways files break in a
 * factory (cut off, bytes flipped, chunk sizes that lie, wrong formats, junk). Every input must be
 * read or refused with AnalysisInputError and one of the engine's codes; nothing else may escape.
 */
import fc from 'fast-check'
import wavefile from 'wavefile'
import { describe, expect, it } from 'vitest'
import {
  ANALYSIS_ERROR_CODES,
  AnalysisInputError,
  DEFAULT_PROFILE,
  decodeChannel,
  parseWavLayout,
  stationProfileSchema,
  validateRecording,
  type StationProfile,
} from '../../server/analysis/index'

const { WaveFile } = wavefile

/** At least this many inputs per property (our bar: enough generated and mutated files for a crash or hang on a rare layout to show). */
const RUNS = 10_000
/** A hang or a very slow input fails the run instead of being cut short silently. */
const TIME_LIMIT_MS = 40_000

/** A sweep of a few milliseconds, so that files of a few hundred frames can pass every check. */
const TINY: StationProfile = stationProfileSchema.parse({ sweep: { f1Hz: 100, f2Hz: 20_000, durationS: 0.004, preSilenceS: 0.001, levelVrms: 2 } })
const TINY_MIC: StationProfile = stationProfileSchema.parse({ channels: ['mic'], fullScaleV: [1], sweep: TINY.sweep })
const PROFILES = [DEFAULT_PROFILE, TINY, TINY_MIC]

const DEPTHS = ['16', '24', '32', '32f', '64'] as const
const RATES = [8000, 22_050, 44_100, 48_000, 96_000, 192_000, 384_000]

const spec = fc.record({
  channels: fc.integer({ min: 1, max: 3 }),
  rate: fc.constantFrom(...RATES),
  depth: fc.constantFrom(...DEPTHS),
  frames: fc.integer({ min: 0, max: 600 }),
  amplitude: fc.constantFrom(0, 0.001, 0.3, 0.9, 1, 1.5),
  nan: fc.boolean(),
})
type Spec = typeof spec extends fc.Arbitrary<infer T> ? T : never

function writeWav(s: Spec): Uint8Array {
  const float = s.depth === '32f' || s.depth === '64'
  const full = s.depth === '16' ? 32767 : s.depth === '24' ? 8388607 : 2147483647
  const data: number[][] = []
  for (let c = 0; c < s.channels; c++) {
    const ch: number[] = []
    for (let i = 0; i < s.frames; i++) {
      const v = s.amplitude * Math.sin((2 * Math.PI * (i + 1) * (c + 1)) / 37)
      const clamped = Math.max(-1, Math.min(1, v))
      ch.push(float ? (s.nan && i === s.frames >> 1 ? Number.NaN : v) : Math.round(clamped * full))
    }
    data.push(ch)
  }
  const wf = new WaveFile()
  wf.fromScratch(s.channels, s.rate, s.depth, s.channels === 1 ? data[0]! : data)
  return wf.toBuffer()
}

const u32 = fc.constantFrom(0, 1, 2, 15, 16, 17, 39, 0x7fffffff, 0x80000000, 0xfffffffe, 0xffffffff)
const u16 = fc.constantFrom(0, 1, 2, 3, 4, 7, 8, 16, 24, 32, 33, 64, 0xfffe, 0xffff)

/** One change to a file; offsets are taken modulo its length. */
const mutation = fc.oneof(
  fc.record({ kind: fc.constant('truncate' as const), at: fc.nat() }),
  fc.record({ kind: fc.constant('flip' as const), at: fc.nat(), bits: fc.integer({ min: 1, max: 255 }) }),
  fc.record({ kind: fc.constant('u32' as const), at: fc.constantFrom(4, 16, 24, 28, 40, 44, 0), value: u32 }),
  fc.record({ kind: fc.constant('u16' as const), at: fc.constantFrom(20, 22, 32, 34, 36, 44), value: u16 }),
  fc.record({ kind: fc.constant('anyU32' as const), at: fc.nat(), value: u32 }),
  fc.record({ kind: fc.constant('insertChunk' as const), at: fc.nat(), id: fc.constantFrom('fmt ', 'data', 'LIST', 'junk', 'JUNK'), size: u32, body: fc.uint8Array({ maxLength: 48 }) }),
  fc.record({ kind: fc.constant('append' as const), bytes: fc.uint8Array({ maxLength: 64 }) }),
)
type Mutation = typeof mutation extends fc.Arbitrary<infer T> ? T : never

function mutate(src: Uint8Array, m: Mutation): Uint8Array {
  const b = Uint8Array.from(src)
  const at = (n: number, room = 1) => (b.length > room ? n % (b.length - room + 1) : 0)
  const view = () => new DataView(b.buffer, b.byteOffset, b.byteLength)
  switch (m.kind) {
    case 'truncate':
      return b.subarray(0, at(m.at, 0))
    case 'flip':
      if (b.length) b[at(m.at)]! ^= m.bits
      return b
    case 'u32':
    case 'anyU32': {
      const o = m.kind === 'u32' ? m.at : at(m.at, 4)
      if (o + 4 <= b.length) view().setUint32(o, m.value, true)
      return b
    }
    case 'u16':
      if (m.at + 2 <= b.length) view().setUint16(m.at, m.value, true)
      return b
    case 'insertChunk': {
      const head = new Uint8Array(8)
      head.set([...m.id].map((c) => c.charCodeAt(0)))
      new DataView(head.buffer).setUint32(4, m.size, true)
      const o = Math.min(b.length, 12 + at(m.at, 0))
      return Uint8Array.from([...b.subarray(0, o), ...head, ...m.body, ...b.subarray(o)])
    }
    case 'append':
      return Uint8Array.from([...b, ...m.bytes])
  }
}

const KNOWN_CODES = new Set<string>(ANALYSIS_ERROR_CODES)

/** Reads the file both ways the product does; returns the outcome or throws what is not a typed refusal. */
function readOrRefuse(bytes: Uint8Array, profile: StationProfile): string {
  try {
    const layout = parseWavLayout(bytes)
    // The decoder never reads past the data chunk the layout vouched for.
    expect(layout.dataOffset + layout.dataBytes).toBeLessThanOrEqual(bytes.byteLength)
    expect(Number.isInteger(layout.frames)).toBe(true)
    for (let c = 0; c < layout.channels; c++) expect(decodeChannel(bytes, layout, c, 1)).toHaveLength(layout.frames)
    const v = validateRecording(bytes, profile)
    expect(v.frames).toBe(layout.frames)
    for (const ch of Object.values(v.channels)) for (const x of ch) expect(Number.isFinite(x)).toBe(true)
    return 'accepted'
  } catch (err) {
    if (err instanceof AnalysisInputError && KNOWN_CODES.has(err.code)) return err.code
    throw err
  }
}

describe('WAV reader: every input is read or refused with a typed error', () => {
  it(`wavefile-written files with up to three mutations (${RUNS} runs)`, () => {
    const outcomes = new Map<string, number>()
    let runs = 0
    fc.assert(
      fc.property(spec, fc.array(mutation, { maxLength: 3 }), fc.constantFrom(...PROFILES), (s, muts, profile) => {
        runs++
        const bytes = muts.reduce(mutate, writeWav(s))
        const out = readOrRefuse(bytes, profile)
        outcomes.set(out, (outcomes.get(out) ?? 0) + 1)
      }),
      { numRuns: RUNS, interruptAfterTimeLimit: TIME_LIMIT_MS, markInterruptAsFailure: true, seed: 8_2026 },
    )
    expect(runs).toBeGreaterThanOrEqual(RUNS)
    // The generator reaches both sides: files that pass validation and the usual refusals.
    expect(outcomes.get('accepted') ?? 0).toBeGreaterThan(0)
    for (const code of ['truncated', 'not_wave', 'unsupported_encoding', 'channel_mismatch', 'too_short']) expect(outcomes.get(code) ?? 0).toBeGreaterThan(0)
  }, 60_000)

  it(`random bytes, with and without a RIFF/WAVE header (${RUNS} runs)`, () => {
    let runs = 0
    const header = fc.constantFrom(new Uint8Array(0), Uint8Array.from([...'RIFF\0\0\0\0WAVE'].map((c) => c.charCodeAt(0))), Uint8Array.from([...'RIFF\xff\xff\xff\xffWAVEfmt '].map((c) => c.charCodeAt(0))))
    fc.assert(
      fc.property(header, fc.uint8Array({ maxLength: 256 }), fc.constantFrom(...PROFILES), (h, body, profile) => {
        runs++
        readOrRefuse(Uint8Array.from([...h, ...body]), profile)
      }),
      { numRuns: RUNS, interruptAfterTimeLimit: TIME_LIMIT_MS, markInterruptAsFailure: true, seed: 8_2027 },
    )
    expect(runs).toBeGreaterThanOrEqual(RUNS)
  }, 60_000)
})
