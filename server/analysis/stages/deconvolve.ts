/**
 * Deconvolve, part one: the recorded channels' spectra and the stimulus as played.
 *
 * The stimulus reference is the amplifier's output, drive + sense (the terminal voltage plus the
 * drop across the sense resistor), so the station's playback latency and clock cancel in every
 * division by it. Without a drive channel the profile's sweep is regenerated at its nominal start
 * (and the terminal voltage, if a sense channel exists, is that minus the sense voltage).
 * The divisions themselves happen in the stages that need them (impedance: sense over drive;
 * response: mic over stimulus).
 */
import type { SweepContext } from '../context.ts'
import { addSpectra } from '../dsp.ts'
import { rfft } from '../fft.ts'
import { generateSweep } from '../sweep.ts'

export function deconvolve(ctx: SweepContext): void {
  const { N, fs } = ctx
  const sweep = ctx.profile.sweep
  const { mic, drive, sense } = ctx.channels
  const P = mic ? rfft(mic, N) : null
  const Xs = sense ? rfft(sense, N) : null
  let Xd = drive ? rfft(drive, N) : null
  let Xa: Float64Array
  if (Xd && Xs) Xa = addSpectra(Xd, Xs)
  else if (Xd) Xa = Xd
  else {
    const regen = new Float64Array(N)
    regen.set(generateSweep(sweep, fs, Math.SQRT2 * sweep.levelVrms), Math.round(sweep.preSilenceS * fs))
    Xa = rfft(regen, N)
    if (Xs) Xd = addSpectra(Xa, Xs, -1)
    ctx.notes.push('No drive channel: the stimulus was regenerated from the profile sweep.')
  }
  ctx.spectra = { P, Xs, Xd, Xa }
}
