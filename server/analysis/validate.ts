import { AnalysisInputError } from './errors.ts'
import type { ChannelRole, StationProfile } from '../../shared/utils/station-profile.ts'
import { decodeChannel, parseWavLayout, type SampleEncoding } from './wav-reader.ts'

/** Accepted station sample rates (stations differ; any common audio rate from 44.1 to 192 kHz is fine). */
export const MIN_SAMPLE_RATE_HZ = 44_100
export const MAX_SAMPLE_RATE_HZ = 192_000
/**
 * The sweep's top must stay below this fraction of the Nyquist frequency, leaving room for the
 * converter's anti-alias transition band (common practice: such filters start near 0.45·fs).
 */
export const NYQUIST_USABLE_FRACTION = 0.95
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
/** Pre-silence kept clear of the sweep's start when measuring the noise floor. */
export const NOISE_GUARD_S = 0.005
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

function rmsOf(x: Float64Array, from: number, to: number): number {
  const a = Math.max(0, from)
  const b = Math.min(x.length, to)
  if (b <= a) return 0
  let s = 0
  for (let i = a; i < b; i++) s += x[i]! * x[i]!
  return Math.sqrt(s / (b - a))
}

/**
 * The fast, separate validation step: structure, encoding, channel count, rate, length,
 * finiteness, clipping and a silent drive. Returns the decoded channels in volts so that the
 * analysis does not decode twice.
 * @throws AnalysisInputError with a stable code for every rejected input.
 */
export function validateRecording(
  bytes: Uint8Array,
  profile: StationProfile,
  options: { allowClipped?: boolean } = {},
): ValidatedRecording {
  const t0 = performance.now()
  const layout = parseWavLayout(bytes)
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
  const channels: Partial<Record<ChannelRole, Float64Array>> = {}
  const stats: ChannelStats[] = []
  const noiseEnd = sweepStart - Math.round(NOISE_GUARD_S * fs)
  for (let c = 0; c < roles.length; c++) {
    const role = roles[c]!
    const fsV = profile.fullScaleV[c]!
    const x = decodeChannel(bytes, layout, c, fsV)
    const clipLevel = CLIP_THRESHOLD * fsV
    let peak = 0
    let run = 0
    let clipped = false
    for (let i = 0; i < x.length; i++) {
      const v = x[i]!
      if (!Number.isFinite(v)) {
        throw new AnalysisInputError('non_finite', `Channel ${c + 1} (${role}) holds a NaN or infinite sample at frame ${i}.`, {
          channel: c,
        })
      }
      const a = v < 0 ? -v : v
      if (a > peak) peak = a
      if (a >= clipLevel) {
        if (++run >= CLIP_RUN_SAMPLES) clipped = true
      } else run = 0
    }
    const sweepRms = rmsOf(x, sweepStart, sweepEnd)
    const noiseRms = noiseEnd > 16 ? rmsOf(x, 0, noiseEnd) : null
    let snrDb: number | null = null
    if (noiseRms !== null) {
      snrDb = noiseRms > 0 ? Math.min(SNR_CAP_DB, 20 * Math.log10(sweepRms / noiseRms)) : SNR_CAP_DB
      if (!Number.isFinite(snrDb)) snrDb = sweepRms > 0 ? SNR_CAP_DB : 0
    }
    channels[role] = x
    stats.push({
      role,
      index: c,
      fullScaleV: fsV,
      peakV: peak,
      peakDbfs: peak > 0 ? 20 * Math.log10(peak / fsV) : -SNR_CAP_DB,
      sweepRmsV: sweepRms,
      noiseRmsV: noiseRms,
      snrDb,
      clipped,
    })
  }
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
  if (driveStats && driveStats.sweepRmsV < SILENT_DRIVE_FRACTION * level) {
    if (!driveSilentWithCurrent) {
      throw new AnalysisInputError(
        'silent_drive',
        `The drive channel is silent (${driveStats.sweepRmsV.toExponential(2)} V RMS during the sweep, expected about ${profile.sweep.levelVrms} V): the station played nothing.`,
        { channel: driveStats.index },
      )
    }
  }
  return {
    sampleRate: fs,
    frames: layout.frames,
    encoding: layout.encoding,
    bitsPerSample: layout.bitsPerSample,
    extensible: layout.extensible,
    channels,
    stats,
    driveSilentWithCurrent,
    validationMs: performance.now() - t0,
  }
}
