/**
 * Stage 1, condition: removes DC from every channel before anything else reads it.
 *
 * An audio interface's input offset (a few per cent of full scale is common on cheap ones) is a
 * constant over the whole recording. Zero-padded to the transform length it becomes a rectangular
 * pulse whose spectrum spreads across the low bins: on the sense channel it moves the impedance at
 * low frequency (Fs, Re), on the mic it reads as a large low-order "harmonic" (THD).
 *
 * The offset is measured where the channel carries no signal: the mean over its quiet blocks (the
 * silence before and after the sweep, wherever the sweep lies in the recording), then subtracted
 * from every frame the analysis reads. Not the mean over all frames: that would also take out the
 * signal's own mean (an exponential sweep's slow start leaves one, and so does a unit's even-order
 * distortion), a rectangular pulse of its own that moved Fs on the clean reference recordings
 * by about 0.4 % and Qms by about 1 %. Over the silence the signal is zero, so a clean recording comes out unchanged and one
 * with an offset comes out as its clean twin. Mains hum in the silence averages out over the
 * quiet blocks (its mean over T seconds is at most 1/(π·f·T) of its amplitude).
 *
 * Works in place on the validated recording's channels: the validation's figures were taken
 * before (about each channel's own DC), and only the later stages read the channels afterwards.
 */
import { findHum, removeHum } from '../hum.ts'
import { playedStimulus } from '../level.ts'
import type { SweepContext } from '../context.ts'

/** Block length for finding the quiet part of a channel, s (a few cycles of the sweep's bottom end). */
export const DC_BLOCK_S = 0.01
/** Blocks whose variance is within this factor (20 dB) of the quietest block's count as quiet. */
export const DC_QUIET_SPREAD = 100
/**
 * A channel has silence only if its quietest block's variance is this far (20 dB) below the
 * channel's; otherwise (no silence recorded, or a channel that is all noise) the mean over every
 * frame is the best estimate of the offset there is.
 */
export const DC_SILENCE_BELOW = 0.01

/**
 * An offset estimated within this many standard errors of zero (the noise's own mean over the
 * silence) is not told apart from none (common practice: three standard errors).
 */
export const DC_SIGNIFICANT_SE = 3

/**
 * The channel's DC offset over x[0, n): the mean of its quiet blocks when it has silence (0 when
 * that is within DC_SIGNIFICANT_SE standard errors of zero), else the mean of all n frames.
 */
export function estimateDc(x: Float64Array, n: number, blockLen: number): number {
  const len = Math.min(n, x.length)
  if (len <= 0) return 0
  const B = Math.max(1, Math.min(blockLen, len))
  const blocks = Math.floor(len / B)
  const sums = new Float64Array(blocks)
  const vars = new Float64Array(blocks)
  let total = 0
  let totalSq = 0
  for (let k = 0; k < blocks; k++) {
    // Four accumulators each: independent adds keep the loop off one dependency chain (speed).
    let s0 = 0
    let s1 = 0
    let s2 = 0
    let s3 = 0
    let q0 = 0
    let q1 = 0
    let q2 = 0
    let q3 = 0
    const end = (k + 1) * B
    let i = k * B
    for (; i + 3 < end; i += 4) {
      const a = x[i]!
      const b = x[i + 1]!
      const c = x[i + 2]!
      const d = x[i + 3]!
      s0 += a
      s1 += b
      s2 += c
      s3 += d
      q0 += a * a
      q1 += b * b
      q2 += c * c
      q3 += d * d
    }
    for (; i < end; i++) {
      const v = x[i]!
      s0 += v
      q0 += v * v
    }
    const s = s0 + s1 + s2 + s3
    const q = q0 + q1 + q2 + q3
    sums[k] = s
    const m = s / B
    vars[k] = Math.max(0, q / B - m * m)
    total += s
    totalSq += q
  }
  for (let i = blocks * B; i < len; i++) {
    total += x[i]!
    totalSq += x[i]! * x[i]!
  }
  const mean = total / len
  const variance = Math.max(0, totalSq / len - mean * mean)
  let minVar = Number.POSITIVE_INFINITY
  for (let k = 0; k < blocks; k++) minVar = Math.min(minVar, vars[k]!)
  if (!(minVar <= DC_SILENCE_BELOW * variance)) return mean
  // A tiny absolute floor so exactly silent blocks (variance 0 up to rounding) all count.
  const limit = DC_QUIET_SPREAD * minVar + 1e-15 * variance
  let s = 0
  let v = 0
  let count = 0
  for (let k = 0; k < blocks; k++) {
    if (vars[k]! <= limit) {
      s += sums[k]!
      v += vars[k]!
      count += B
    }
  }
  if (count === 0) return mean
  const dc = s / count
  // An offset within DC_SIGNIFICANT_SE standard errors of the silence's own noise mean is no offset:
  // left alone, which spares the clean recording its subtraction pass.
  const standardError = Math.sqrt((v * B) / count / count)
  return Math.abs(dc) > DC_SIGNIFICANT_SE * standardError ? dc : 0
}

/** Subtracts `dc` from x[0, n) in place. */
export function subtractDc(x: Float64Array, n: number, dc: number): void {
  if (dc === 0) return
  const len = Math.min(n, x.length)
  for (let i = 0; i < len; i++) x[i] = x[i]! - dc
}

/**
 * DC off every channel, then mains hum off the microphone and current channels, then the stimulus
 * as played (the amplifier's output: its level against the profile and where the sweep started).
 */
export function condition(ctx: SweepContext): void {
  const n = ctx.recording.analysisFrames
  const blockLen = Math.max(1, Math.round(DC_BLOCK_S * ctx.fs))
  const { mic, drive, sense } = ctx.channels
  for (const x of [mic, drive, sense]) if (x) subtractDc(x, n, estimateDc(x, n, blockLen))
  removeMainsHum(ctx)
  ctx.played = playedStimulus(drive, sense, n, ctx.profile, ctx.fs)
  ctx.params.levelOffsetDb = ctx.played?.levelOffsetDb ?? null
}

/** Quiet spans kept clear of the sweep: its fade-in and the unit's decay after it (our guards). */
const HUM_GUARD_BEFORE_S = 0.005
const HUM_GUARD_AFTER_S = 0.05

/**
 * Mains hum on the microphone and the current channel (hum.ts), fitted over the silence before and
 * after the sweep and subtracted from the whole channel; the result says so.
 */
function removeMainsHum(ctx: SweepContext): void {
  const n = ctx.recording.analysisFrames
  const sweep = ctx.profile.sweep
  const start = Math.round(sweep.preSilenceS * ctx.fs)
  const end = start + Math.round(sweep.durationS * ctx.fs)
  const spans = [
    { start: 0, end: Math.max(0, start - Math.round(HUM_GUARD_BEFORE_S * ctx.fs)) },
    { start: Math.min(n, end + Math.round(HUM_GUARD_AFTER_S * ctx.fs)), end: n },
  ]
  for (const role of ['mic', 'sense'] as const) {
    const x = ctx.channels[role]
    if (!x) continue
    const hum = findHum(x, spans, ctx.fs)
    if (!hum) continue
    removeHum(x, hum, ctx.fs, n)
    const fsV = ctx.profile.fullScaleV[ctx.profile.channels.indexOf(role)]!
    ;(ctx.params.disturbances ??= []).push({
      code: 'hum',
      note: `Mains hum at ${hum.f0Hz.toFixed(2)} Hz on the ${role === 'mic' ? 'microphone' : 'current'} channel (${(20 * Math.log10(hum.rms / fsV)).toFixed(0)} dBFS), removed before the analysis.`,
      retest: false,
    })
  }
}
