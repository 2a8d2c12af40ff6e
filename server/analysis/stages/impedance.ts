/**
 * Impedance: Z = R·Xd/Xs from the sense (current × R) and terminal-voltage channels.
 *
 * The admittance × R (Xs/Xd) is deconvolved to an impulse response, its linear part windowed
 * (LINEAR_WINDOW_S after, PRE_WINDOW_S before the impulse) so the coil's distortion products, which
 * land at negative times, and noise beyond the window drop out; the curve is read from that
 * windowed spectrum on the grid between the usable band's edges.
 */
import type { SweepContext } from '../context.ts'
import { impulseResponse, windowSpectrum } from '../dsp.ts'
import { binInterp, workBuffer } from '../fft.ts'

export function impedance(ctx: SweepContext): void {
  const { N, freqHz, curves, senseOhm: R } = ctx
  const { fLoValid, fTopValid, preN, linN, M, linBinHz } = ctx.windows
  const Xs = ctx.spectra?.Xs
  const Xa = ctx.spectra?.Xa
  if (!Xs || !Xa || ctx.unitDead) {
    ctx.unmeasured.push('impedance', 'small_signal')
    ctx.notes.push(ctx.unitDead ? 'Impedance not measured: the coil is open or shorted.' : 'Impedance needs a sense channel (and a drive channel or a regenerated stimulus).')
    return
  }
  // The terminal voltage is the amplifier's output less the sense resistor's drop: Xd = Xa − Xs.
  // Only its windowed part is kept: the response itself lives in a reused buffer.
  const hs = impulseResponse(Xs, Xa, N, Xs, workBuffer('admittance impulse response', N))
  const Yw = windowSpectrum(hs, 0, preN, linN, M)
  const zMag: (number | null)[] = []
  const zPh: (number | null)[] = []
  for (const f of freqHz) {
    if (f < fLoValid || f > fTopValid) {
      zMag.push(null)
      zPh.push(null)
      continue
    }
    const [yr, yi] = binInterp(Yw, f / linBinHz)
    const d = yr * yr + yi * yi
    const zr = (R * yr) / d
    const zi = (-R * yi) / d
    zMag.push(Math.hypot(zr, zi))
    zPh.push((Math.atan2(zi, zr) * 180) / Math.PI)
  }
  curves.impedanceOhm = zMag
  curves.impedancePhaseDeg = zPh
  ctx.admittance = Yw
}
