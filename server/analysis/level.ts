import type { StationProfile } from '../../shared/utils/station-profile.ts'
import { SWEEP_FADE_S } from './sweep.ts'
import { workBuffer } from './fft.ts'

/** The stimulus as the station played it, read from the amplifier's output. */
export interface PlayedStimulus {
  /**
   * The amplifier's output over the analysed frames: the terminal voltage plus the sense resistor's
   * drop, V. A reused buffer (fft.ts workBuffer): valid for the recording being analysed.
   */
  output: Float64Array
  /** Its level against the profile's, dB (null when it is silent). */
  levelOffsetDb: number | null
  /** Where the station really started the sweep, in frames after the profile's start. */
  offsetFrames: number
}

/**
 * The stimulus as played, from the drive channel (and the sense channel when there is one): the
 * amplifier's output is the terminal voltage plus the drop across the sense resistor (drive + sense).
 * Without a sense channel the terminal voltage stands in (a little lower, by the sense resistor's
 * share); without a drive channel there is nothing to read (null).
 *
 * - Level: the output's energy over everything the analysis reads, spread over the sweep's
 *   duration, is the sweep's RMS wherever in the recording the sweep lies (a station that starts
 *   late or early still reads right).
 * - Start: the output has a constant amplitude over the sweep, so half its energy lies before the
 *   sweep's middle; the residual of rub and buzz is read in blocks along the sweep from there.
 */
export function playedStimulus(drive: Float64Array | null, sense: Float64Array | null, n: number, profile: StationProfile, fs: number): PlayedStimulus | null {
  if (!drive) return null
  const output = workBuffer('amplifier output', n)
  let energy = 0
  for (let i = 0; i < n; i++) {
    const a = drive[i]! + (sense ? sense[i]! : 0)
    output[i] = a
    energy += a * a
  }
  let acc = 0
  let mid = 0
  while (mid < n && acc < energy / 2) {
    acc += output[mid]! * output[mid]!
    mid++
  }
  const sweep = profile.sweep
  const played = Math.sqrt(energy / (sweep.durationS * fs))
  // The profile's level is the RMS of the full-level part; the half-Hann fades (mean square 3/8)
  // lower the whole sweep's RMS by this factor.
  const fadeShare = Math.min(1, (2 * SWEEP_FADE_S) / sweep.durationS)
  const expected = sweep.levelVrms * Math.sqrt(1 - fadeShare * (1 - 3 / 8))
  return {
    output,
    levelOffsetDb: played > 0 ? 20 * Math.log10(played / expected) : null,
    offsetFrames: mid - Math.round((sweep.durationS / 2) * fs) - Math.round(sweep.preSilenceS * fs),
  }
}
