import wavefile from 'wavefile'
import { describe, expect, it } from 'vitest'
import {
  AnalysisInputError,
  analyzeRecording,
  decodeChannel,
  DEFAULT_PROFILE,
  parseImpedanceTable,
  parseWavLayout,
  validateRecording,
  type AnalysisErrorCode,
} from '../../../server/analysis/index.ts'
import { encodeWav, generateImpedanceTable, generateRecording, mulberry32 } from '../../../fixtures/generator.ts'
import { profileWith } from './helpers.ts'

const { WaveFile } = wavefile
const good = generateRecording({ seed: 3 })

function codeOf(fn: () => unknown): AnalysisErrorCode | 'no error' | 'other error' {
  try {
    fn()
    return 'no error'
  } catch (e) {
    return e instanceof AnalysisInputError ? e.code : 'other error'
  }
}

function patched(bytes: Uint8Array, edit: (dv: DataView, b: Uint8Array) => void): Uint8Array {
  const b = Uint8Array.from(bytes)
  edit(new DataView(b.buffer), b)
  return b
}

const DATA_SIZE_OFFSET = 40 // 12 (RIFF) + 8 + 16 (fmt) + 4 ('data')

describe('bad recordings are rejected with a stable code, never guessed', () => {
  const cases: [string, AnalysisErrorCode, () => unknown][] = [
    ['empty file', 'empty_file', () => validateRecording(new Uint8Array(0), DEFAULT_PROFILE)],
    ['text, not RIFF', 'not_wave', () => validateRecording(new TextEncoder().encode('frequency,magnitude\n10,7.1\n'), DEFAULT_PROFILE)],
    ['RIFF but not WAVE', 'not_wave', () => validateRecording(patched(good, (_dv, b) => b.set([0x41, 0x56, 0x49, 0x20], 8)), DEFAULT_PROFILE)],
    ['cut-off transfer (data missing)', 'truncated', () => validateRecording(good.subarray(0, Math.floor(good.length * 0.6)), DEFAULT_PROFILE)],
    ['ends inside the fmt chunk', 'truncated', () => validateRecording(good.subarray(0, 24), DEFAULT_PROFILE)],
    ['data chunk claims more than the RIFF holds', 'size_mismatch', () => validateRecording(patched(good, (dv) => dv.setUint32(DATA_SIZE_OFFSET, 0xffffff00, true)), DEFAULT_PROFILE)],
    ['absurd sizes in both RIFF and data headers', 'size_mismatch', () =>
        validateRecording(
          patched(good, (dv) => {
            dv.setUint32(4, 0xfffffff0, true)
            dv.setUint32(DATA_SIZE_OFFSET, 0xffffff00, true)
          }),
          DEFAULT_PROFILE,
        )],
    ['ADPCM format tag', 'unsupported_encoding', () => validateRecording(patched(good, (dv) => dv.setUint16(20, 2, true)), DEFAULT_PROFILE)],
    ['8-bit PCM', 'unsupported_encoding', () => validateRecording(patched(encodeWav([new Float64Array(100)], 48000, 'pcm16'), (dv) => { dv.setUint16(34, 8, true); dv.setUint16(32, 1, true) }), profileWith({ channels: ['mic'], fullScaleV: [1] }))],
    ['two channels for a three-channel profile', 'channel_mismatch', () => validateRecording(generateRecording({ profile: profileWith({ channels: ['mic', 'drive'], fullScaleV: [1, 20] }) }), DEFAULT_PROFILE)],
    ['22.05 kHz sample rate', 'sample_rate_out_of_range', () => validateRecording(patched(good, (dv) => dv.setUint32(24, 22050, true)), DEFAULT_PROFILE)],
    ['384 kHz sample rate', 'sample_rate_out_of_range', () => validateRecording(patched(good, (dv) => dv.setUint32(24, 384000, true)), DEFAULT_PROFILE)],
    ['44.1 kHz for a sweep to 22 kHz', 'sample_rate_too_low', () => validateRecording(patched(good, (dv) => dv.setUint32(24, 44100, true)), profileWith({ sweep: { ...DEFAULT_PROFILE.sweep, f2Hz: 22000 } }))],
    ['shorter than the sweep', 'too_short', () => validateRecording(good, profileWith({ sweep: { ...DEFAULT_PROFILE.sweep, durationS: 2 } }))],
    ['clipped mic channel', 'clipped', () => validateRecording(generateRecording({ defect: 'clipped' }), DEFAULT_PROFILE)],
    ['silent drive (station fault)', 'silent_drive', () => analyzeRecording(generateRecording({ defect: 'silent_drive' }), DEFAULT_PROFILE)],
    ['NaN sample in a float file', 'non_finite', () => {
        const b = generateRecording({ encoding: 'float32', seed: 4 })
        const dv = new DataView(b.buffer, b.byteOffset, b.byteLength)
        dv.setFloat32(44 + 4 * 3 * 1000, Number.NaN, true)
        return validateRecording(b, DEFAULT_PROFILE)
      }],
  ]
  it.each(cases)('%s → %s', (_name, code, fn) => {
    expect(codeOf(fn)).toBe(code)
  })

  it('accepts the good file and validates in a few milliseconds', () => {
    validateRecording(good, DEFAULT_PROFILE) // warm-up
    const v = validateRecording(good, DEFAULT_PROFILE)
    expect(v.sampleRate).toBe(48000)
    expect(v.channels.mic!.length).toBe(v.frames)
    expect(v.validationMs).toBeLessThan(50) // generous on a loaded 2-core CI box
  })

  it('never allocates from a header claim: a 4 GB claim in a 1 kB file fails fast', () => {
    const tiny = patched(good.subarray(0, 1024), (dv) => dv.setUint32(DATA_SIZE_OFFSET, 0xfffffff0, true))
    const t = performance.now()
    expect(codeOf(() => parseWavLayout(tiny))).toBe('size_mismatch')
    expect(performance.now() - t).toBeLessThan(50)
  })
})

describe('decoder agrees with wavefile (an independent reader/writer)', () => {
  const rand = mulberry32(9)
  const n = 500
  const norm = [0, 1, 2].map(() => Float64Array.from({ length: n }, () => 0.9 * (rand() * 2 - 1)))
  it.each([
    ['16', 'pcm16', 32768],
    ['24', 'pcm24', 8388608],
    ['32', 'pcm32', 2147483648],
    ['32f', 'float32', 1],
    ['64', 'float64', 1],
  ] as const)('wavefile %s-bit, 3 channels', (depth, encoding, scale) => {
    const wf = new WaveFile()
    const isFloat = depth === '32f' || depth === '64'
    wf.fromScratch(3, 48000, depth, norm.map((ch) => Array.from(ch, (v) => (isFloat ? v : Math.round(v * scale)))))
    const bytes = wf.toBuffer()
    const layout = parseWavLayout(bytes)
    expect(layout.encoding).toBe(encoding)
    const ref = new WaveFile()
    ref.fromBuffer(bytes)
    const theirs = ref.getSamples(false) as unknown as Float64Array[]
    for (let c = 0; c < 3; c++) {
      const mine = decodeChannel(bytes, layout, c, 1)
      for (let i = 0; i < n; i += 37) expect(mine[i]! * (isFloat ? 1 : scale)).toBeCloseTo(Number(theirs[c]![i]), isFloat && depth === '32f' ? 5 : 9)
    }
  })

  it('reads our own writer in every encoding, plain and extensible', () => {
    for (const encoding of ['pcm16', 'pcm24', 'pcm32', 'float32', 'float64'] as const) {
      for (const extensible of [false, true]) {
        const layout = parseWavLayout(encodeWav(norm, 44100, encoding, extensible))
        expect(layout.encoding).toBe(encoding)
        expect(layout.extensible).toBe(extensible)
        expect(layout.frames).toBe(n)
      }
    }
  })
})

describe('impedance table errors name the line, so the station can fix its export', () => {
  const table = generateImpedanceTable({ points: 30 })
  const lines = table.split('\n')
  it.each([
    ['fewer than 20 points', lines.slice(0, 12).join('\n'), 'table_too_few_points', undefined],
    ['frequencies not increasing', [...lines.slice(0, 6), lines[3]!, ...lines.slice(6)].join('\n'), 'table_not_increasing', 7],
    ['negative magnitude', lines.map((l, i) => (i === 9 ? l.replace(/,(\d)/, ',-$1') : l)).join('\n'), 'table_negative_magnitude', 10],
    ['unparsable line', lines.map((l, i) => (i === 14 ? 'n/a,n/a' : l)).join('\n'), 'table_unparsable', 15],
    ['three columns then two', lines.map((l, i) => (i === 5 ? l.split(',').slice(0, 2).join(',') : l)).join('\n'), 'table_unparsable', 6],
  ] as const)('%s', (_name, text, code, line) => {
    try {
      parseImpedanceTable(text)
      expect.fail('no error')
    } catch (e) {
      expect(e).toBeInstanceOf(AnalysisInputError)
      expect((e as AnalysisInputError).code).toBe(code)
      expect((e as AnalysisInputError).line).toBe(line)
      if (line !== undefined) expect((e as Error).message).toContain(`Line ${line}`)
    }
  })
})
