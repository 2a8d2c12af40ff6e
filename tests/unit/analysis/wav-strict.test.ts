/**
 * The RIFF structure is read strictly, never guessed (README, "Validation"; docs/method.md): the
 * RIFF size must be the file's length less 8, or a streaming writer's placeholder (0 or
 * 0xFFFFFFFF); a second fmt or data chunk is refused. The in-memory walk and the walk of a file
 * read in pieces give the same answer.
 */
import { describe, expect, it } from 'vitest'
import {
  AnalysisInputError,
  DEFAULT_PROFILE,
  parseWavLayout,
  readWavLayout,
  validateRecording,
  type AnalysisErrorCode,
} from '../../../server/analysis/index.ts'
import { encodeWav, generateRecording } from '../../../fixtures/generator.ts'

const good = generateRecording({ seed: 96 })
const RIFF_SIZE_OFFSET = 4

function withRiffSize(bytes: Uint8Array, size: number): Uint8Array {
  const b = Uint8Array.from(bytes)
  new DataView(b.buffer).setUint32(RIFF_SIZE_OFFSET, size, true)
  return b
}

function chunk(id: string, body: Uint8Array): Uint8Array {
  const out = new Uint8Array(8 + body.length + (body.length & 1))
  out.set([...id].map((c) => c.charCodeAt(0)))
  new DataView(out.buffer).setUint32(4, body.length, true)
  out.set(body, 8)
  return out
}

/** `bytes` with chunks appended and the RIFF size made right again (a consistent file). */
function appended(bytes: Uint8Array, ...chunks: Uint8Array[]): Uint8Array {
  const b = Uint8Array.from([...bytes, ...chunks.flatMap((c) => [...c])])
  return withRiffSize(b, b.length - 8)
}

function layoutCode(bytes: Uint8Array): AnalysisErrorCode | 'accepted' {
  try {
    parseWavLayout(bytes)
    return 'accepted'
  } catch (e) {
    if (e instanceof AnalysisInputError) return e.code
    throw e
  }
}

async function fileLayoutCode(bytes: Uint8Array): Promise<AnalysisErrorCode | 'accepted'> {
  try {
    await readWavLayout({ size: bytes.length, read: async (o, l) => bytes.slice(o, o + l) })
    return 'accepted'
  } catch (e) {
    if (e instanceof AnalysisInputError) return e.code
    throw e
  }
}

const fmtOf = (bytes: Uint8Array) => bytes.subarray(20, 36)
const dataOf = (bytes: Uint8Array) => bytes.subarray(44, 44 + 96)

describe('the RIFF size', () => {
  const cases: [string, Uint8Array, AnalysisErrorCode | 'accepted'][] = [
    ['exactly the file length less 8', good, 'accepted'],
    ['0, a streaming writer’s placeholder', withRiffSize(good, 0), 'accepted'],
    ['0xFFFFFFFF, a streaming writer’s placeholder', withRiffSize(good, 0xffffffff), 'accepted'],
    ['0xFFFFFFFE with intact chunks (more than any recording)', withRiffSize(good, 0xfffffffe), 'size_mismatch'],
    ['a few kB more than the file (cut off after a whole chunk)', withRiffSize(good, good.length - 8 + 4096), 'truncated'],
    ['less than the file (bytes after the declared end)', withRiffSize(good, good.length - 8 - 96), 'size_mismatch'],
    ['right, with junk appended after it', Uint8Array.from([...good, ...new Uint8Array(64)]), 'size_mismatch'],
    ['right, with 5 stray bytes counted in it (a cut chunk header)', appended(good, new Uint8Array([1, 2, 3, 4, 5])), 'truncated'],
  ]
  it.each(cases)('%s → %s', async (_name, bytes, code) => {
    expect(layoutCode(bytes)).toBe(code)
    expect(await fileLayoutCode(bytes)).toBe(code)
  })

  it('counts the pad byte of an odd last chunk whether or not the writer wrote it', () => {
    const odd = Uint8Array.from([...good, ...chunk('note', new Uint8Array([7, 7, 7]))]) // 3-byte body + pad
    expect(layoutCode(withRiffSize(odd, odd.length - 8))).toBe('accepted')
    const unpadded = odd.subarray(0, odd.length - 1)
    expect(layoutCode(withRiffSize(unpadded, unpadded.length - 8))).toBe('accepted')
    expect(layoutCode(withRiffSize(unpadded, unpadded.length - 7))).toBe('accepted')
  })

  it('keeps other chunks after the data (a LIST chunk is common)', () => {
    const listed = appended(good, chunk('LIST', new TextEncoder().encode('INFOISFT')))
    expect(layoutCode(listed)).toBe('accepted')
    expect(validateRecording(listed, DEFAULT_PROFILE).frames).toBe(parseWavLayout(good).frames)
  })
})

describe('chunks that appear twice', () => {
  it.each([
    ['a second data chunk after the first', appended(good, chunk('data', dataOf(good)))],
    ['a second fmt chunk after the data', appended(good, chunk('fmt ', fmtOf(good)))],
    ['a second fmt chunk telling another rate', appended(good, chunk('fmt ', (() => {
      const f = Uint8Array.from(fmtOf(good))
      new DataView(f.buffer).setUint32(4, 96_000, true)
      return f
    })()))],
  ])('%s is refused (duplicate_chunk)', async (_name, bytes) => {
    expect(layoutCode(bytes)).toBe('duplicate_chunk')
    expect(await fileLayoutCode(bytes)).toBe('duplicate_chunk')
    expect(() => validateRecording(bytes, DEFAULT_PROFILE)).toThrow(/second (data|fmt) chunk/)
  })

  it('still reads a file whose one data chunk comes before its fmt chunk', () => {
    const plain = encodeWav([new Float64Array(64)], 48_000)
    const reordered = Uint8Array.from([...plain.subarray(0, 12), ...plain.subarray(36), ...plain.subarray(12, 36)])
    expect(parseWavLayout(reordered).frames).toBe(64)
  })
})
