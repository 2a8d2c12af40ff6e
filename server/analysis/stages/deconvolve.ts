/**
 * Deconvolve, part one: the recorded channels' spectra and the stimulus as played.
 *
 * The stimulus reference is the amplifier's output, drive + sense (the terminal voltage plus the
 * drop across the sense resistor), so the station's playback latency and clock cancel in every
 * division by it. Without a drive channel the profile's sweep is regenerated at its nominal start
 * (and the terminal voltage, if a sense channel exists, is that minus the sense voltage).
 * With a drive channel the amplifier's output (condition) is transformed once, not drive and
 * sense apart. The divisions themselves happen in the stages that need them (impedance: sense over
 * the terminal voltage, Xa − Xs; response: mic over stimulus).
 */
import type { SweepContext } from '../context.ts'
import { rfft } from '../fft.ts'
import { generateSweep } from '../sweep.ts'

export function deconvolve(ctx: SweepContext): void {
  const { N, fs } = ctx
  const sweep = ctx.profile.sweep
  const { mic, sense } = ctx.channels
  const P = mic ? rfft(mic, N) : null
  const Xs = sense ? rfft(sense, N) : null
  let Xa: Float64Array
  if (ctx.played) Xa = rfft(ctx.played.output, N)
  else {
    const regen = new Float64Array(N)
    regen.set(generateSweep(sweep, fs, Math.SQRT2 * sweep.levelVrms), Math.round(sweep.preSilenceS * fs))
    Xa = rfft(regen, N)
    ctx.notes.push('No drive channel: the stimulus was regenerated from the profile sweep.')
  }
  ctx.spectra = { P, Xs, Xa }
}
