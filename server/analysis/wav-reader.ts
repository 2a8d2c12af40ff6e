import { AnalysisInputError } from './errors.ts'

/**
 * RIFF WAVE reader. The chunk structure is walked here with every size checked against the
 * bytes actually present, so a header's claim never drives an allocation. Samples are decoded
 * here too (a tight loop per encoding is several times faster than a general decoder, which
 * matters for the per-recording budget); tests cross-check this decoder against `wavefile`.
 *
 * The walk is written once (walkWavLayout) and asks for the few bytes it needs, so the same rules
 * read a file held in memory (parseWavLayout) or a file on disk without loading it (readWavLayout).
 * Strict reading, never a guess: the RIFF size must be the file's length (or a streaming writer's
 * placeholder, 0 or 0xFFFFFFFF), and a second fmt or data chunk is refused.
 */

const WAVE_FORMAT_PCM = 0x0001
const WAVE_FORMAT_IEEE_FLOAT = 0x0003
const WAVE_FORMAT_EXTENSIBLE = 0xfffe
const RIFF_HEADER_BYTES = 12
const CHUNK_HEADER_BYTES = 8
const FMT_MIN_BYTES = 16
const FMT_EXTENSIBLE_BYTES = 40
/** RIFF sizes left by writers that stream and never come back to fill in the length: the file's length then stands. */
const RIFF_SIZE_PLACEHOLDERS = [0, 0xffffffff]
/** Bytes read at once while walking the chunks of a file on disk (one read covers the usual headers). */
const LAYOUT_READ_BYTES = 64 * 1024
/** Largest recording the engine will look at (a 60 s, 192 kHz, 3-channel, 64-bit file is ~276 MB). */
export const MAX_RECORDING_BYTES = 300 * 1024 * 1024

export type SampleEncoding = 'pcm16' | 'pcm24' | 'pcm32' | 'float32' | 'float64'

export interface WavLayout {
  formatTag: number
  extensible: boolean
  encoding: SampleEncoding
  channels: number
  sampleRate: number
  bitsPerSample: number
  blockAlign: number
  dataOffset: number
  dataBytes: number
  frames: number
  chunkIds: string[]
}

function fourCC(b: Uint8Array, o: number): string {
  return String.fromCharCode(b[o]!, b[o + 1]!, b[o + 2]!, b[o + 3]!)
}

function u16(b: Uint8Array, o: number): number {
  return b[o]! | (b[o + 1]! << 8)
}

function u32(b: Uint8Array, o: number): number {
  return (b[o]! | (b[o + 1]! << 8) | (b[o + 2]! << 16)) + b[o + 3]! * 0x1000000
}

/** A read the layout walk needs: `length` bytes from `offset`, always inside the file. */
export interface LayoutRead {
  offset: number
  length: number
}

/**
 * A file read in pieces (a recording on disk, or in memory): the engine never needs all of it at
 * once. `read` answers exactly `length` bytes for a range inside the file.
 */
export interface ByteSource {
  readonly size: number
  read(offset: number, length: number): Promise<Uint8Array>
}

/**
 * The RIFF walk of a file of `n` bytes: yields each range it needs and receives those bytes, and
 * returns the bounds-checked layout. Throws AnalysisInputError on any defect.
 */
function* walkWavLayout(n: number): Generator<LayoutRead, WavLayout, Uint8Array> {
  if (n === 0) throw new AnalysisInputError('empty_file', 'The file is empty.')
  if (n < RIFF_HEADER_BYTES) {
    if (n >= 4 && fourCC(yield { offset: 0, length: 4 }, 0) === 'RIFF') throw new AnalysisInputError('truncated', 'The file ends inside the RIFF header.')
    throw new AnalysisInputError('not_wave', 'Not a RIFF/WAVE file (too short for a RIFF header).')
  }
  if (n > MAX_RECORDING_BYTES) {
    throw new AnalysisInputError('size_mismatch', `The file is larger than the ${MAX_RECORDING_BYTES} byte limit.`)
  }
  const head = yield { offset: 0, length: RIFF_HEADER_BYTES }
  if (fourCC(head, 0) !== 'RIFF' || fourCC(head, 8) !== 'WAVE') {
    throw new AnalysisInputError('not_wave', 'Not a RIFF/WAVE file (missing RIFF or WAVE signature).')
  }
  // Declared end of the RIFF form; a streaming writer's placeholder declares nothing.
  const riffSize = u32(head, 4)
  const riffEnd = RIFF_SIZE_PLACEHOLDERS.includes(riffSize) ? Number.POSITIVE_INFINITY : riffSize + 8

  let offset = RIFF_HEADER_BYTES
  let fmt: { tag: number; channels: number; rate: number; blockAlign: number; bits: number; sub: number | null } | null = null
  let data: { offset: number; bytes: number } | null = null
  const chunkIds: string[] = []
  while (offset + CHUNK_HEADER_BYTES <= n) {
    const header = yield { offset, length: CHUNK_HEADER_BYTES }
    const id = fourCC(header, 0)
    const size = u32(header, 4)
    const bodyStart = offset + CHUNK_HEADER_BYTES
    const bodyEnd = bodyStart + size
    chunkIds.push(id)
    if (bodyEnd > n) {
      if (bodyEnd > riffEnd || size > MAX_RECORDING_BYTES) {
        throw new AnalysisInputError(
          'size_mismatch',
          `Chunk "${id}" claims ${size} bytes but only ${n - bodyStart} are present and the RIFF header does not account for it.`,
        )
      }
      throw new AnalysisInputError('truncated', `The file is cut off: chunk "${id}" claims ${size} bytes, only ${n - bodyStart} are present.`)
    }
    if (id === 'fmt ') {
      // Two formats for one set of samples: which one the writer meant cannot be known.
      if (fmt !== null) throw new AnalysisInputError('duplicate_chunk', 'The file holds a second fmt chunk: it is not clear which format the samples are in.')
      if (size < FMT_MIN_BYTES) throw new AnalysisInputError('truncated', `The fmt chunk is ${size} bytes, at least ${FMT_MIN_BYTES} are needed.`)
      const body = yield { offset: bodyStart, length: Math.min(size, FMT_EXTENSIBLE_BYTES) }
      const tag = u16(body, 0)
      let sub: number | null = null
      if (tag === WAVE_FORMAT_EXTENSIBLE) {
        if (size < FMT_EXTENSIBLE_BYTES) throw new AnalysisInputError('truncated', 'The extensible fmt chunk is too short.')
        sub = u16(body, 24)
      }
      fmt = {
        tag,
        channels: u16(body, 2),
        rate: u32(body, 4),
        blockAlign: u16(body, 12),
        bits: u16(body, 14),
        sub,
      }
    } else if (id === 'data') {
      // A second take appended to the first, or a damaged file: reading either one would be a guess.
      if (data !== null) throw new AnalysisInputError('duplicate_chunk', 'The file holds a second data chunk: it is not clear which samples are the recording.')
      data = { offset: bodyStart, bytes: size }
    }
    offset = bodyEnd + (size & 1) // chunks are word aligned
  }
  if (offset < n) {
    throw new AnalysisInputError('truncated', `The file ends inside a chunk header (${n - offset} byte(s) after the last chunk).`)
  }
  // The RIFF size is the file's length less 8 (a last chunk's missing pad byte may be counted).
  if (riffEnd !== Number.POSITIVE_INFINITY && riffEnd !== n && riffEnd !== offset) {
    if (riffEnd < n) {
      throw new AnalysisInputError('size_mismatch', `The RIFF header declares ${riffEnd} bytes but the file holds ${n}: ${n - riffEnd} byte(s) lie outside the recording.`)
    }
    if (riffEnd > MAX_RECORDING_BYTES + RIFF_HEADER_BYTES) {
      throw new AnalysisInputError('size_mismatch', `The RIFF header declares ${riffEnd} bytes, more than any recording can hold; the file holds ${n}.`)
    }
    throw new AnalysisInputError('truncated', `The file is cut off: the RIFF header declares ${riffEnd} bytes, only ${n} are present.`)
  }
  if (fmt === null) throw new AnalysisInputError(data === null ? 'truncated' : 'not_wave', 'The file has no fmt chunk.')
  if (data === null) throw new AnalysisInputError('truncated', 'The file has no data chunk.')

  const effectiveTag = fmt.tag === WAVE_FORMAT_EXTENSIBLE ? fmt.sub! : fmt.tag
  let encoding: SampleEncoding
  if (effectiveTag === WAVE_FORMAT_PCM && fmt.bits === 16) encoding = 'pcm16'
  else if (effectiveTag === WAVE_FORMAT_PCM && fmt.bits === 24) encoding = 'pcm24'
  else if (effectiveTag === WAVE_FORMAT_PCM && fmt.bits === 32) encoding = 'pcm32'
  else if (effectiveTag === WAVE_FORMAT_IEEE_FLOAT && fmt.bits === 32) encoding = 'float32'
  else if (effectiveTag === WAVE_FORMAT_IEEE_FLOAT && fmt.bits === 64) encoding = 'float64'
  else {
    throw new AnalysisInputError(
      'unsupported_encoding',
      `Unsupported sample encoding (format tag 0x${effectiveTag.toString(16)}, ${fmt.bits} bits); use PCM 16/24/32-bit or float 32/64-bit.`,
    )
  }
  if (fmt.channels < 1) throw new AnalysisInputError('unsupported_encoding', 'The fmt chunk declares no channels.')
  const bytesPerSample = fmt.bits / 8
  if (fmt.blockAlign !== fmt.channels * bytesPerSample) {
    throw new AnalysisInputError('unsupported_encoding', `Block align ${fmt.blockAlign} does not match ${fmt.channels} × ${bytesPerSample} bytes.`)
  }
  if (data.bytes % fmt.blockAlign !== 0) {
    throw new AnalysisInputError('truncated', `The data chunk (${data.bytes} bytes) does not hold a whole number of ${fmt.blockAlign}-byte frames.`)
  }
  return {
    formatTag: fmt.tag,
    extensible: fmt.tag === WAVE_FORMAT_EXTENSIBLE,
    encoding,
    channels: fmt.channels,
    sampleRate: fmt.rate,
    bitsPerSample: fmt.bits,
    blockAlign: fmt.blockAlign,
    dataOffset: data.offset,
    dataBytes: data.bytes,
    frames: data.bytes / fmt.blockAlign,
    chunkIds,
  }
}

/** Parses and bounds-checks the RIFF structure of a file held in memory; throws AnalysisInputError on any defect. */
export function parseWavLayout(bytes: Uint8Array): WavLayout {
  const walk = walkWavLayout(bytes.byteLength)
  let step = walk.next()
  while (!step.done) step = walk.next(bytes.subarray(step.value.offset, step.value.offset + step.value.length))
  return step.value
}

/** The same walk over a file read in pieces (its headers only: the samples are not read). */
export async function readWavLayout(src: ByteSource): Promise<WavLayout> {
  const walk = walkWavLayout(src.size)
  let window: { offset: number; bytes: Uint8Array } | null = null
  let step = walk.next()
  while (!step.done) {
    const { offset, length } = step.value
    if (window === null || offset < window.offset || offset + length > window.offset + window.bytes.length) {
      window = { offset, bytes: await src.read(offset, Math.max(length, Math.min(LAYOUT_READ_BYTES, src.size - offset))) }
    }
    step = walk.next(window.bytes.subarray(offset - window.offset, offset - window.offset + length))
  }
  return step.value
}

/**
 * Decodes one channel to normalised samples (−1…1 for integer PCM), scaled by `gain`.
 * Returns the decoded array; non-finite float samples are left in place for the caller to report.
 */
export function decodeChannel(bytes: Uint8Array, layout: WavLayout, channel: number, gain: number): Float64Array {
  const out = new Float64Array(layout.frames)
  decodeFrames(bytes.subarray(layout.dataOffset, layout.dataOffset + layout.dataBytes), layout, channel, gain, out, 0)
  return out
}

/**
 * Decodes one channel of `block` (whole frames, starting at a frame boundary) into `out` from
 * index `at`, scaled by `gain`: the one decoder, for a whole file or a piece of one.
 */
export function decodeFrames(
  block: Uint8Array,
  layout: Pick<WavLayout, 'encoding' | 'blockAlign' | 'bitsPerSample'>,
  channel: number,
  gain: number,
  out: Float64Array,
  at: number,
): void {
  const { blockAlign } = layout
  const frames = Math.floor(block.byteLength / blockAlign)
  const end = at + frames
  let p = channel * (layout.bitsPerSample / 8)
  switch (layout.encoding) {
    case 'pcm16': {
      const g = gain / 32768
      for (let i = at; i < end; i++, p += blockAlign) out[i] = (((block[p]! | (block[p + 1]! << 8)) << 16) >> 16) * g
      break
    }
    case 'pcm24': {
      const g = gain / 8388608
      for (let i = at; i < end; i++, p += blockAlign) {
        out[i] = (((block[p]! | (block[p + 1]! << 8) | (block[p + 2]! << 16)) << 8) >> 8) * g
      }
      break
    }
    case 'pcm32': {
      const g = gain / 2147483648
      for (let i = at; i < end; i++, p += blockAlign) {
        out[i] = (block[p]! | (block[p + 1]! << 8) | (block[p + 2]! << 16) | (block[p + 3]! << 24)) * g
      }
      break
    }
    case 'float32': {
      const dv = new DataView(block.buffer, block.byteOffset, block.byteLength)
      for (let i = at; i < end; i++, p += blockAlign) out[i] = dv.getFloat32(p, true) * gain
      break
    }
    case 'float64': {
      const dv = new DataView(block.buffer, block.byteOffset, block.byteLength)
      for (let i = at; i < end; i++, p += blockAlign) out[i] = dv.getFloat64(p, true) * gain
      break
    }
  }
}
