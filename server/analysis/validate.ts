import { AnalysisInputError } from './errors.ts'
import { NYQUIST_USABLE_FRACTION, OPEN_COIL_OHM } from './constants.ts'
import type { ChannelRole, StationProfile } from '../../shared/utils/station-profile.ts'
import { decodeFrames, parseWavLayout, readWavLayout, type ByteSource, type SampleEncoding, type WavLayout } from './wav-reader.ts'

/** Accepted station sample rates (stations differ; any common audio rate from 44.1 to 192 kHz is fine). */
export const MIN_SAMPLE_RATE_HZ = 44_100
export const MAX_SAMPLE_RATE_HZ = 192_000
/** The sweep's top must stay below this fraction of fs/2 (the reason is in constants.ts). */
export { NYQUIST_USABLE_FRACTION }
/** A sample at or beyond this fraction of full scale counts as full scale. */
export const CLIP_THRESHOLD = 0.999
/** Consecutive full-scale samples that make a clip (common practice: one full-scale sample may be a legal peak). */
export const CLIP_RUN_SAMPLES = 3
/** Drive RMS below this fraction of the profile's sweep level counts as silent (−40 dB). */
export const SILENT_DRIVE_FRACTION = 0.01
/** Drive RMS below this fraction of the sweep level, with current flowing, is a collapsed (shorted) load. */
export const COLLAPSED_DRIVE_FRACTION = 0.1
/** Sense-resistor RMS above this fraction of the sweep level counts as current flowing. */
export const CURRENT_PRESENT_FRACTION = 0.1
/**
 * A mic channel this far above its own noise floor hears the unit play (common practice: a signal
 * 20 dB above the noise is plainly present). With the drive silent and current flowing, that
 * means the drive-voltage probe reads nothing, not that the unit is shorted: a shorted unit is
 * silent.
 */
export const PROBE_FAULT_MIC_SNR_DB = 20
/** Pre-silence kept clear of the sweep's start when measuring the noise floor. */
export const NOISE_GUARD_S = 0.005
/** Silence after the sweep kept clear of the unit's decay and the room's before it counts as noise (our guard). */
export const TAIL_GUARD_S = 0.05
/** Reported SNR is capped here (a noise-free synthetic file would otherwise read infinite). */
export const SNR_CAP_DB = 200

export interface ChannelStats {
  role: ChannelRole
  index: number
  fullScaleV: number
  peakV: number
  peakDbfs: number
  sweepRmsV: number
  noiseRmsV: number | null
  snrDb: number | null
  clipped: boolean
}

export interface ValidatedRecording {
  sampleRate: number
  frames: number
  /** The frames the analysis reads (the decoded channels' length): see analysisFrames. */
  analysisFrames: number
  encoding: SampleEncoding
  bitsPerSample: number
  extensible: boolean
  /** Channels in volts, by role. */
  channels: Partial<Record<ChannelRole, Float64Array>>
  stats: ChannelStats[]
  /** Drive silent but current flowing: a shorted unit rather than a silent station. */
  driveSilentWithCurrent: boolean
  validationMs: number
}

export interface ValidateOptions {
  allowClipped?: boolean
}

/**
 * Most frames the analysis takes from one recording: 2^20, i.e. 5.46 s at 192 kHz or 21.8 s at
 * 48 kHz (our limit). Its transforms are then 2^20 points long, which keeps a worker's peak near
 * 300 MB (memory.ts); an end-of-line sweep lasts a few seconds.
 */
export const MAX_ANALYSIS_FRAMES = 2 ** 20
/**
 * What the analysis keeps after the sweep's end when a recording is longer than it takes: room for
 * the unit's response to die away, over twice the engine's 0.2 s linear window (our choice).
 */
export const ANALYSIS_TAIL_S = 0.5

/**
 * Frames the analysis reads from a recording: all of them when they fit MAX_ANALYSIS_FRAMES;
 * otherwise pre-silence, sweep and ANALYSIS_TAIL_S of what follows (the rest is silence to it).
 */
export function analysisFrames(frames: number, sampleRate: number, sweepEnd: number): number {
  if (frames <= MAX_ANALYSIS_FRAMES) return frames
  return Math.min(frames, sweepEnd + Math.round(ANALYSIS_TAIL_S * sampleRate))
}

/** analysisFrames for a recording's layout under a station profile (what a worker budgets its memory by). */
export function analysisFramesOf(layout: Pick<WavLayout, 'frames' | 'sampleRate'>, profile: StationProfile): number {
  const fs = layout.sampleRate
  return analysisFrames(layout.frames, fs, Math.round(profile.sweep.preSilenceS * fs) + Math.round(profile.sweep.durationS * fs))
}

/** Bytes of a recording read at once when it is validated from a file (one piece in memory at a time). */
export const VALIDATION_BLOCK_BYTES = 1024 * 1024

/** Frames of the noise window (before the sweep, clear of its start), of the sweep, and the end of what the analysis reads. */
interface Windows {
  noiseEnd: number
  /** First frame of the silence after the sweep (clear of the unit's decay). */
  tailStart: number
  sweepStart: number
  sweepEnd: number
  analysisEnd: number
}

/** Checks what the layout alone tells (channels, rate, length) and returns the sample windows. */
function checkLayout(layout: WavLayout, profile: StationProfile): Windows {
  const roles = profile.channels
  if (layout.channels !== roles.length) {
    throw new AnalysisInputError(
      'channel_mismatch',
      `The file has ${layout.channels} channel(s); the station profile expects ${roles.length} (${roles.join(', ')}).`,
    )
  }
  const fs = layout.sampleRate
  if (fs < MIN_SAMPLE_RATE_HZ || fs > MAX_SAMPLE_RATE_HZ) {
    throw new AnalysisInputError(
      'sample_rate_out_of_range',
      `Sample rate ${fs} Hz is outside ${MIN_SAMPLE_RATE_HZ}–${MAX_SAMPLE_RATE_HZ} Hz.`,
    )
  }
  if (profile.sweep.f2Hz >= NYQUIST_USABLE_FRACTION * (fs / 2)) {
    throw new AnalysisInputError(
      'sample_rate_too_low',
      `Sample rate ${fs} Hz is too low for a sweep up to ${profile.sweep.f2Hz} Hz (needs f2 below ${NYQUIST_USABLE_FRACTION} × fs/2).`,
    )
  }
  const sweepStart = Math.round(profile.sweep.preSilenceS * fs)
  const sweepEnd = sweepStart + Math.round(profile.sweep.durationS * fs)
  if (layout.frames < sweepEnd) {
    throw new AnalysisInputError(
      'too_short',
      `The recording holds ${(layout.frames / fs).toFixed(3)} s; the sweep needs ${(sweepEnd / fs).toFixed(3)} s (pre-silence + sweep).`,
    )
  }
  const analysisEnd = analysisFramesOf(layout, profile)
  if (analysisEnd > MAX_ANALYSIS_FRAMES) {
    throw new AnalysisInputError(
      'recording_too_long',
      `Pre-silence, sweep and ${ANALYSIS_TAIL_S} s after it take ${(analysisEnd / fs).toFixed(2)} s; at ${fs} Hz the analysis reads at most ${(MAX_ANALYSIS_FRAMES / fs).toFixed(2)} s: shorten the sweep or lower the sample rate.`,
    )
  }
  return { noiseEnd: sweepStart - Math.round(NOISE_GUARD_S * fs), sweepStart, sweepEnd, tailStart: sweepEnd + Math.round(TAIL_GUARD_S * fs), analysisEnd }
}

/** Shortest pre-silence (frames) that gives a noise floor. */
const MIN_NOISE_FRAMES = 16

/** Running figures of one channel, fed its samples in order (the whole channel at once, or piece by piece). */
class ChannelScan {
  peak = 0
  run = 0
  clipped = false
  /** First frame holding a NaN or an infinity, or −1. */
  nonFiniteAt = -1
  noiseSum = 0
  sweepSum = 0
  /** Plain sums of the same windows: their means are the channel's DC, left out of the RMS figures. */
  noiseLin = 0
  sweepLin = 0
  /** The same figures of the silence after the sweep (its second noise window). */
  tailSum = 0
  tailLin = 0

  constructor(
    private readonly clipLevel: number,
    private readonly w: Windows,
  ) {}

  /** Feeds x[from, to), the samples of frames frame0, frame0 + 1, … */
  feed(x: Float64Array, from: number, to: number, frame0: number): void {
    const clipLevel = this.clipLevel
    let { peak, run, clipped } = this
    for (let i = from; i < to; i++) {
      const v = x[i]!
      // v − v is NaN for a NaN or an infinity and 0 for every finite sample.
      if (v - v !== 0) {
        if (this.nonFiniteAt < 0) this.nonFiniteAt = frame0 + i - from
        continue
      }
      const a = v < 0 ? -v : v
      if (a > peak) peak = a
      if (a >= clipLevel) {
        if (++run >= CLIP_RUN_SAMPLES) clipped = true
      } else run = 0
    }
    Object.assign(this, { peak, run, clipped })
    if (this.nonFiniteAt >= 0) return
    // The windows' sums, each over the part of the piece it covers, carried on from the pieces
    // before in frame order (so a file read piece by piece sums exactly as one read whole).
    const { noiseEnd, sweepStart, sweepEnd, tailStart, analysisEnd } = this.w
    const span = (lo: number, hi: number, sums0: [number, number]): [number, number] =>
      sums(x, from + Math.max(0, lo - frame0), from + Math.min(to - from, hi - frame0), sums0)
    ;[this.noiseSum, this.noiseLin] = span(0, noiseEnd, [this.noiseSum, this.noiseLin])
    ;[this.sweepSum, this.sweepLin] = span(sweepStart, sweepEnd, [this.sweepSum, this.sweepLin])
    ;[this.tailSum, this.tailLin] = span(tailStart, analysisEnd, [this.tailSum, this.tailLin])
  }
}

/** The sum of squares and the plain sum `start` carries, with x[lo, hi) added (nothing when hi ≤ lo). */
function sums(x: Float64Array, lo: number, hi: number, start: [number, number]): [number, number] {
  let [q, l] = start
  for (let i = lo; i < hi; i++) {
    const v = x[i]!
    q += v * v
    l += v
  }
  return [q, l]
}

/**
 * One recording's validation, fed its data chunk in pieces of whole frames: keeps the decoded
 * channels (for the analysis) or only a piece's worth of scratch (for the upload check).
 */
class RecordingScan {
  readonly windows: Windows
  private readonly scans: ChannelScan[]
  private readonly kept: Float64Array[] | null
  private scratch: Float64Array | null = null
  private frame = 0

  constructor(
    readonly layout: WavLayout,
    private readonly profile: StationProfile,
    keepChannels: boolean,
  ) {
    this.windows = checkLayout(layout, profile)
    this.scans = profile.fullScaleV.map((fsV) => new ChannelScan(CLIP_THRESHOLD * fsV, this.windows))
    this.kept = keepChannels ? profile.channels.map(() => new Float64Array(this.windows.analysisEnd)) : null
  }

  /** The next piece of the data chunk (whole frames); every frame is checked, the analysed ones kept. */
  push(block: Uint8Array): void {
    const frames = Math.floor(block.byteLength / this.layout.blockAlign)
    const keep = this.kept ? Math.max(0, Math.min(frames, this.windows.analysisEnd - this.frame)) : 0
    for (let c = 0; c < this.scans.length; c++) {
      let out: Float64Array
      let at: number
      if (this.kept && keep === frames) {
        out = this.kept[c]!
        at = this.frame
      } else {
        if (!this.scratch || this.scratch.length < frames) this.scratch = new Float64Array(frames)
        out = this.scratch
        at = 0
      }
      decodeFrames(block, this.layout, c, this.profile.fullScaleV[c]!, out, at)
      this.scans[c]!.feed(out, at, at + frames, this.frame)
      if (this.kept && keep > 0 && keep < frames) this.kept[c]!.set(out.subarray(0, keep), this.frame)
    }
    this.frame += frames
  }

  /** The figures and the rules, once every frame was pushed. */
  finish(options: ValidateOptions, t0: number): ValidatedRecording {
    const { layout, profile, windows } = this
    const roles = profile.channels
    const bad = this.scans.findIndex((s) => s.nonFiniteAt >= 0)
    if (bad >= 0) {
      throw new AnalysisInputError('non_finite', `Channel ${bad + 1} (${roles[bad]}) holds a NaN or infinite sample at frame ${this.scans[bad]!.nonFiniteAt}.`, {
        channel: bad,
      })
    }
    const channels: Partial<Record<ChannelRole, Float64Array>> = {}
    const stats = this.scans.map((scan, c): ChannelStats => {
      const fsV = profile.fullScaleV[c]!
      const sweepFrames = windows.sweepEnd - windows.sweepStart
      // RMS about the channel's DC (an interface's offset is not signal): the pre-silence's mean,
      // or the sweep's own without a pre-silence.
      const hasNoise = windows.noiseEnd > MIN_NOISE_FRAMES
      const dc = hasNoise ? scan.noiseLin / windows.noiseEnd : sweepFrames > 0 ? scan.sweepLin / sweepFrames : 0
      const sweepRms = sweepFrames > 0 ? Math.sqrt(Math.max(0, (scan.sweepSum - 2 * dc * scan.sweepLin) / sweepFrames + dc * dc)) : 0
      const preRms = hasNoise ? Math.sqrt(Math.max(0, scan.noiseSum / windows.noiseEnd - dc * dc)) : null
      // A sweep played early or late fills one of the two silences: the quieter one is the noise.
      const tailFrames = windows.analysisEnd - windows.tailStart
      const tailDc = tailFrames > MIN_NOISE_FRAMES ? scan.tailLin / tailFrames : 0
      const tailRms = tailFrames > MIN_NOISE_FRAMES ? Math.sqrt(Math.max(0, scan.tailSum / tailFrames - tailDc * tailDc)) : null
      const noiseRms = preRms === null ? null : tailRms === null ? preRms : Math.min(preRms, tailRms)
      let snrDb: number | null = null
      if (noiseRms !== null) {
        snrDb = noiseRms > 0 ? Math.min(SNR_CAP_DB, 20 * Math.log10(sweepRms / noiseRms)) : SNR_CAP_DB
        if (!Number.isFinite(snrDb)) snrDb = sweepRms > 0 ? SNR_CAP_DB : 0
      }
      if (this.kept) channels[roles[c]!] = this.kept[c]!
      return {
        role: roles[c]!,
        index: c,
        fullScaleV: fsV,
        peakV: scan.peak,
        peakDbfs: scan.peak > 0 ? 20 * Math.log10(scan.peak / fsV) : -SNR_CAP_DB,
        sweepRmsV: sweepRms,
        noiseRmsV: noiseRms,
        snrDb,
        clipped: scan.clipped,
      }
    })
    const driveSilentWithCurrent = applyRules(stats, profile, options)
    return {
      sampleRate: layout.sampleRate,
      frames: layout.frames,
      analysisFrames: windows.analysisEnd,
      encoding: layout.encoding,
      bitsPerSample: layout.bitsPerSample,
      extensible: layout.extensible,
      channels,
      stats,
      driveSilentWithCurrent,
      validationMs: performance.now() - t0,
    }
  }
}

/**
 * The rules on the channels' figures: clipping, a silent drive, a dead drive probe. Returns
 * whether the drive is silent with current flowing (a shorted unit, once a probe fault is ruled out).
 * @throws AnalysisInputError `clipped`, `silent_drive`, `drive_probe_fault`, `sense_probe_fault`.
 */
/** A small voltage as a technician reads it: "0.063 mV", "150 mV". */
function millivolts(v: number): string {
  const mv = v * 1000
  return `${mv >= 10 ? mv.toFixed(0) : mv.toPrecision(2)} mV`
}

function applyRules(stats: ChannelStats[], profile: StationProfile, options: ValidateOptions): boolean {
  const level = profile.sweep.levelVrms
  const driveStats = stats.find((s) => s.role === 'drive')
  const senseStats = stats.find((s) => s.role === 'sense')
  // Current flows but the terminal voltage has collapsed: a shorted unit. Its current is limited
  // only by the sense resistor, so the sense channel may clip; that is the unit's fault, not the file's.
  const driveSilentWithCurrent =
    driveStats !== undefined &&
    senseStats !== undefined &&
    driveStats.sweepRmsV < COLLAPSED_DRIVE_FRACTION * level &&
    senseStats.sweepRmsV >= CURRENT_PRESENT_FRACTION * level
  for (const st of stats) {
    if (!st.clipped || options.allowClipped) continue
    if (st.role === 'sense' && driveSilentWithCurrent) continue
    throw new AnalysisInputError('clipped', `Channel ${st.index + 1} (${st.role}) reaches full scale (${st.fullScaleV} V): the recording is clipped.`, {
      channel: st.index,
    })
  }
  const driveSilent = driveStats !== undefined && driveStats.sweepRmsV < SILENT_DRIVE_FRACTION * level
  // A silent (or collapsed, with current flowing) drive while the microphone hears the unit: the
  // unit is driven, so the probe that measures its terminals reads nothing. A shorted unit is
  // silent, and a station that played nothing too. Without a noise window (no pre-silence) or a
  // mic channel this cannot be told, and the rules below stand.
  const micStats = stats.find((s) => s.role === 'mic')
  const micHearsSweep = micStats?.snrDb != null && micStats.snrDb >= PROBE_FAULT_MIC_SNR_DB
  if ((driveSilent || driveSilentWithCurrent) && micHearsSweep) {
    throw new AnalysisInputError(
      'drive_probe_fault',
      `The drive channel reads ${millivolts(driveStats!.sweepRmsV)} RMS during the sweep while the microphone hears the unit ${micStats!.snrDb!.toFixed(0)} dB above its noise: check the drive-voltage probe and measure again.`,
      { channel: driveStats!.index },
    )
  }
  // The drive is there and the unit plays, but no current reads: a unit that plays draws current, so
  // the lead across the sense resistor reads nothing. An open coil is silent. Without a drive channel
  // the current has no reference, and without a mic the sound cannot be told: the rules stand.
  if (driveStats !== undefined && senseStats !== undefined && !driveSilent && micHearsSweep) {
    const current = senseStats.sweepRmsV / profile.senseResistorOhm
    if (!(current > 0) || driveStats.sweepRmsV / current > OPEN_COIL_OHM) {
      throw new AnalysisInputError(
        'sense_probe_fault',
        `The current (sense) channel reads ${millivolts(senseStats.sweepRmsV)} RMS during the sweep while the microphone hears the unit ${micStats!.snrDb!.toFixed(0)} dB above its noise: check the sense lead and measure again.`,
        { channel: senseStats.index },
      )
    }
  }
  if (driveSilent && !driveSilentWithCurrent) {
    throw new AnalysisInputError(
      'silent_drive',
      `The drive channel is silent (${millivolts(driveStats.sweepRmsV)} RMS during the sweep, expected about ${profile.sweep.levelVrms} V): the station played nothing.`,
      { channel: driveStats.index },
    )
  }
  return driveSilentWithCurrent
}

/**
 * The fast, separate validation step: structure, encoding, channel count, rate, length,
 * finiteness, clipping, a silent drive and a dead drive probe. Returns the decoded channels in
 * volts so that the analysis does not decode twice.
 * @throws AnalysisInputError with a stable code for every rejected input.
 */
export function validateRecording(bytes: Uint8Array, profile: StationProfile, options: ValidateOptions = {}): ValidatedRecording {
  const t0 = performance.now()
  const layout = parseWavLayout(bytes)
  const scan = new RecordingScan(layout, profile, true)
  scan.push(bytes.subarray(layout.dataOffset, layout.dataOffset + layout.dataBytes))
  return scan.finish(options, t0)
}

/**
 * The same validation, with the same rules, of a file read in pieces of about `blockBytes`: the
 * headers first, then the data chunk block by block. Without `keepChannels` (the upload check)
 * no decoded copy of the recording is held, only one block's scratch; with it (the analysis) the
 * decoded channels are filled as the blocks arrive, and the file's bytes are never held whole.
 * `layout` skips reading the headers again when the caller already has them.
 * @throws AnalysisInputError with a stable code for every rejected input.
 */
export async function validateRecordingSource(
  src: ByteSource,
  profile: StationProfile,
  options: ValidateOptions & { keepChannels?: boolean; layout?: WavLayout; blockBytes?: number } = {},
): Promise<ValidatedRecording> {
  const t0 = performance.now()
  const layout = options.layout ?? (await readWavLayout(src))
  const scan = new RecordingScan(layout, profile, options.keepChannels ?? false)
  const block = Math.max(1, Math.floor((options.blockBytes ?? VALIDATION_BLOCK_BYTES) / layout.blockAlign)) * layout.blockAlign
  for (let o = 0; o < layout.dataBytes; o += block) {
    const length = Math.min(block, layout.dataBytes - o)
    const bytes = await src.read(layout.dataOffset + o, length)
    if (bytes.byteLength !== length) throw new AnalysisInputError('truncated', 'The file ended while it was being read.')
    scan.push(bytes)
  }
  return scan.finish(options, t0)
}
