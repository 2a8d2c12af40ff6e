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
 * The channel's DC offset over x[0, n): the mean of its quiet blocks when it has silence, else the
 * mean of all n frames.
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
    let s = 0
    let q = 0
    for (let i = k * B, end = i + B; i < end; i++) {
      const v = x[i]!
      s += v
      q += v * v
    }
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
  let count = 0
  for (let k = 0; k < blocks; k++) {
    if (vars[k]! <= limit) {
      s += sums[k]!
      count += B
    }
  }
  return count > 0 ? s / count : mean
}

/** Subtracts `dc` from x[0, n) in place. */
export function subtractDc(x: Float64Array, n: number, dc: number): void {
  if (dc === 0) return
  const len = Math.min(n, x.length)
  for (let i = 0; i < len; i++) x[i] = x[i]! - dc
}

export function condition(ctx: SweepContext): void {
  const n = ctx.recording.analysisFrames
  const blockLen = Math.max(1, Math.round(DC_BLOCK_S * ctx.fs))
  const { mic, drive, sense } = ctx.channels
  for (const x of [mic, drive, sense]) if (x) subtractDc(x, n, estimateDc(x, n, blockLen))
}
