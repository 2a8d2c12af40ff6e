import { AnalysisInputError } from './errors.ts'

/**
 * RIFF WAVE reader. The chunk structure is walked here with every size checked against the
 * bytes actually present, so a header's claim never drives an allocation. Samples are decoded
 * here too (a tight loop per encoding is several times faster than a general decoder, which
 * matters for the per-recording budget); tests cross-check this decoder against `wavefile`.
 */

const WAVE_FORMAT_PCM = 0x0001
const WAVE_FORMAT_IEEE_FLOAT = 0x0003
const WAVE_FORMAT_EXTENSIBLE = 0xfffe
const RIFF_HEADER_BYTES = 12
const CHUNK_HEADER_BYTES = 8
const FMT_MIN_BYTES = 16
const FMT_EXTENSIBLE_BYTES = 40
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

/** Parses and bounds-checks the RIFF structure; throws AnalysisInputError on any defect. */
export function parseWavLayout(bytes: Uint8Array): WavLayout {
  const n = bytes.byteLength
  if (n === 0) throw new AnalysisInputError('empty_file', 'The file is empty.')
  if (n < RIFF_HEADER_BYTES) {
    if (n >= 4 && fourCC(bytes, 0) === 'RIFF') throw new AnalysisInputError('truncated', 'The file ends inside the RIFF header.')
    throw new AnalysisInputError('not_wave', 'Not a RIFF/WAVE file (too short for a RIFF header).')
  }
  if (n > MAX_RECORDING_BYTES) {
    throw new AnalysisInputError('size_mismatch', `The file is larger than the ${MAX_RECORDING_BYTES} byte limit.`)
  }
  if (fourCC(bytes, 0) !== 'RIFF' || fourCC(bytes, 8) !== 'WAVE') {
    throw new AnalysisInputError('not_wave', 'Not a RIFF/WAVE file (missing RIFF or WAVE signature).')
  }
  // Declared end of the RIFF form. Writers that stream often leave 0 or 0xFFFFFFFF here, so it
  // is used only to tell a cut-off file (headers agree, bytes missing) from inconsistent headers.
  const riffSize = u32(bytes, 4)
  const riffEnd = riffSize === 0 || riffSize === 0xffffffff ? Number.POSITIVE_INFINITY : riffSize + 8

  let offset = RIFF_HEADER_BYTES
  let fmt: { tag: number; channels: number; rate: number; blockAlign: number; bits: number; sub: number | null } | null = null
  let data: { offset: number; bytes: number } | null = null
  const chunkIds: string[] = []
  while (offset + CHUNK_HEADER_BYTES <= n) {
    const id = fourCC(bytes, offset)
    const size = u32(bytes, offset + 4)
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
      if (size < FMT_MIN_BYTES) throw new AnalysisInputError('truncated', `The fmt chunk is ${size} bytes, at least ${FMT_MIN_BYTES} are needed.`)
      const tag = u16(bytes, bodyStart)
      let sub: number | null = null
      if (tag === WAVE_FORMAT_EXTENSIBLE) {
        if (size < FMT_EXTENSIBLE_BYTES) throw new AnalysisInputError('truncated', 'The extensible fmt chunk is too short.')
        sub = u16(bytes, bodyStart + 24)
      }
      fmt = {
        tag,
        channels: u16(bytes, bodyStart + 2),
        rate: u32(bytes, bodyStart + 4),
        blockAlign: u16(bytes, bodyStart + 12),
        bits: u16(bytes, bodyStart + 14),
        sub,
      }
    } else if (id === 'data' && data === null) {
      data = { offset: bodyStart, bytes: size }
    }
    offset = bodyEnd + (size & 1) // chunks are word aligned
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

/**
 * Decodes one channel to normalised samples (−1…1 for integer PCM), scaled by `gain`.
 * Returns the decoded array; non-finite float samples are left in place for the caller to report.
 */
export function decodeChannel(bytes: Uint8Array, layout: WavLayout, channel: number, gain: number): Float64Array {
  const { frames, blockAlign, dataOffset } = layout
  const out = new Float64Array(frames)
  let p = dataOffset + channel * (layout.bitsPerSample / 8)
  switch (layout.encoding) {
    case 'pcm16': {
      const g = gain / 32768
      for (let i = 0; i < frames; i++, p += blockAlign) out[i] = (((bytes[p]! | (bytes[p + 1]! << 8)) << 16) >> 16) * g
      break
    }
    case 'pcm24': {
      const g = gain / 8388608
      for (let i = 0; i < frames; i++, p += blockAlign) {
        out[i] = (((bytes[p]! | (bytes[p + 1]! << 8) | (bytes[p + 2]! << 16)) << 8) >> 8) * g
      }
      break
    }
    case 'pcm32': {
      const g = gain / 2147483648
      for (let i = 0; i < frames; i++, p += blockAlign) {
        out[i] = (bytes[p]! | (bytes[p + 1]! << 8) | (bytes[p + 2]! << 16) | (bytes[p + 3]! << 24)) * g
      }
      break
    }
    case 'float32': {
      const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength)
      for (let i = 0; i < frames; i++, p += blockAlign) out[i] = dv.getFloat32(p, true) * gain
      break
    }
    case 'float64': {
      const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength)
      for (let i = 0; i < frames; i++, p += blockAlign) out[i] = dv.getFloat64(p, true) * gain
      break
    }
  }
  return out
}
