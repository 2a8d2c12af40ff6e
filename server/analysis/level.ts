import type { StationProfile } from '../../shared/utils/station-profile.ts'
import { SWEEP_FADE_S } from './sweep.ts'
import type { ValidatedRecording } from './validate.ts'

/**
 * The level the station played, against its profile: the amplifier's output is the terminal
 * voltage plus the drop across the sense resistor (drive + sense). Its energy over everything the
 * analysis reads, spread over the sweep's duration, is the sweep's RMS wherever in the recording the
 * sweep lies (a station that starts late or early still reads right). Without a sense channel the
 * terminal voltage stands in (a little lower, by the sense resistor's share); without a drive
 * channel there is no level to read.
 */
export function playedLevelOffsetDb(v: ValidatedRecording, profile: StationProfile): number | null {
  const { drive, sense } = v.channels
  if (!drive) return null
  const n = v.analysisFrames
  let energy = 0
  for (let i = 0; i < n; i++) {
    const a = drive[i]! + (sense ? sense[i]! : 0)
    energy += a * a
  }
  const sweep = profile.sweep
  const played = Math.sqrt(energy / (sweep.durationS * v.sampleRate))
  // The profile's level is the RMS of the full-level part; the half-Hann fades (mean square 3/8)
  // lower the whole sweep's RMS by this factor.
  const fadeShare = Math.min(1, (2 * SWEEP_FADE_S) / sweep.durationS)
  const expected = sweep.levelVrms * Math.sqrt(1 - fadeShare * (1 - 3 / 8))
  return played > 0 ? 20 * Math.log10(played / expected) : null
}
