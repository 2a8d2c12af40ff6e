/**
 * Distortion: harmonics H2…H5 and THD along the sweep, from the harmonic impulses of the
 * deconvolved response (an exponential sweep puts order k's impulse harmonicDelayS(k) ahead of the
 * linear one, Farina 2000), each cut out with its own window and compared with the linear response
 * at the same excitation frequency.
 */
import type { SweepContext } from '../context.ts'
import { DEFAULT_THD_AT_HZ, PRE_WINDOW_S } from '../constants.ts'
import { interpLog, windowEnergy, windowSpectrum } from '../dsp.ts'
import { THD_CLEAR_RATIO } from '../noise-floor.ts'
import { binInterp, nextPowerOfTwo } from '../fft.ts'
import { harmonicDelayS } from '../sweep.ts'
import type { ThdAtPoint } from '../types.ts'

/** Harmonic orders reported (H2…H5). */
export const HARMONIC_ORDERS = [2, 3, 4, 5] as const
/**
 * Order k's window reaches back this share of the gap to the next higher order's impulse, and
 * forward HARMONIC_POST_GAP_FRACTION of the gap to the next lower order's: the two add up to one,
 * so neighbouring windows meet without overlapping, and most of each gap goes after the impulse,
 * where its response rings out.
 */
export const HARMONIC_PRE_GAP_FRACTION = 0.3
export const HARMONIC_POST_GAP_FRACTION = 0.7
/** Fewest samples kept ahead of a harmonic impulse (its pre-ringing), however close the next order. */
const HARMONIC_MIN_PRE_SAMPLES = 4
/** The THD maximum is searched from this multiple of f1 (clear of the fade-in)… */
const THD_MAX_LOW_FACTOR = 2
/** …up to where the highest order reported (H5) is still within the usable band. */
const THD_MAX_TOP_ORDER = 5
/** The THD figure of the parameters is read here, Hz (common practice: 1 kHz). */
const THD_FIGURE_HZ = 1000

export function distortion(ctx: SweepContext): void {
  const acoustic = ctx.acoustic
  if (!acoustic) return
  const { ha, Ha, peakIdx } = acoustic
  const { fs, freqHz, params, curves } = ctx
  const sweep = ctx.profile.sweep
  const { fLoValid, fTopValid, linBinHz } = ctx.windows
  const L = Math.log(sweep.f2Hz / sweep.f1Hz)
  const specs: { k: number; spec: Float64Array; M: number; energy: number }[] = []
  for (const k of HARMONIC_ORDERS) {
    const dk = harmonicDelayS(k, sweep) * fs
    const gapAfter = ((sweep.durationS * Math.log(k / (k - 1))) / L) * fs // to the next lower order
    const gapBefore = ((sweep.durationS * Math.log((k + 1) / k)) / L) * fs // to the next higher order
    const pre = Math.max(HARMONIC_MIN_PRE_SAMPLES, Math.round(Math.min(PRE_WINDOW_S * fs, HARMONIC_PRE_GAP_FRACTION * gapBefore)))
    const post = Math.round(HARMONIC_POST_GAP_FRACTION * gapAfter)
    const M = nextPowerOfTwo(pre + post + 1)
    specs.push({ k, spec: windowSpectrum(ha, peakIdx - Math.round(dk), pre, post, M), M, energy: windowEnergy(pre, post) })
  }
  const harmonicPct = (k: number, f: number): number | null => {
    if (f < fLoValid || k * f > fTopValid) return null
    const s = specs[k - 2]!
    const h1 = Math.hypot(...binInterp(Ha, f / linBinHz))
    const hk = Math.hypot(...binInterp(s.spec, (k * f * s.M) / fs))
    return h1 > 0 ? (100 * hk) / h1 : null
  }
  const point = (f: number): ThdAtPoint => {
    const h = HARMONIC_ORDERS.map((k) => harmonicPct(k, f))
    const valid = h.filter((x): x is number => x !== null)
    const thd = h[0] === null ? null : Math.sqrt(valid.reduce((a, x) => a + x * x, 0))
    return { hz: f, thdPct: thd, h2Pct: h[0]!, h3Pct: h[1]!, h4Pct: h[2]!, h5Pct: h[3]!, splDb: null }
  }
  // The THD the noise alone reads at f: each harmonic's window lets through its own share of the
  // noise at k·f, over the linear response at f.
  const noise = acoustic.noise
  const floorPct = (f: number): number | null => {
    if (!noise || f < fLoValid || 2 * f > fTopValid) return null
    const h1 = Math.hypot(...binInterp(Ha, f / linBinHz))
    if (!(h1 > 0)) return null
    let power = 0
    for (const s of specs) if (s.k * f <= fTopValid) power += noise.at(s.k * f, s.energy) ** 2
    return (THD_CLEAR_RATIO * 100 * Math.sqrt(power)) / h1
  }
  const pts = freqHz.map(point)
  const floors = freqHz.map(floorPct)
  // Measured only where it stands clear of the floor; below it the THD is reported as the floor.
  curves.thdPct = pts.map((p, i) => (p.thdPct !== null && floors[i] !== null && p.thdPct < floors[i]! ? null : p.thdPct))
  if (noise) params.thdFloorPct = floors
  curves.h2Pct = pts.map((p) => p.h2Pct)
  curves.h3Pct = pts.map((p) => p.h3Pct)
  curves.h4Pct = pts.map((p) => p.h4Pct)
  curves.h5Pct = pts.map((p) => p.h5Pct)
  const splCurve = curves.splDb
  // A reading below its floor is reported as the floor (the THD is below it), never as read.
  const clear = (p: ThdAtPoint): ThdAtPoint => {
    const fl = floorPct(p.hz)
    return { ...p, thdPct: p.thdPct !== null && fl !== null && p.thdPct < fl ? null : p.thdPct, ...(noise ? { thdFloorPct: fl } : {}) }
  }
  for (const hz of ctx.options.thdAtHz ?? DEFAULT_THD_AT_HZ) {
    const p = clear(point(hz))
    const inRange = hz >= fLoValid && hz <= fTopValid
    let spl: number | null = null
    if (inRange && splCurve) {
      // exact value at hz from the same spectrum as the curve
      const i = freqHz.findIndex((f) => f >= hz)
      spl = i > 0 ? interpLog(freqHz[i - 1]!, splCurve[i - 1] ?? null, freqHz[i]!, splCurve[i] ?? null, hz) : null
    }
    ctx.thdAt.push({ ...p, splDb: spl })
  }
  const atFigure = clear(point(THD_FIGURE_HZ))
  params.thdPct = atFigure.thdPct
  if (atFigure.thdPct === null && atFigure.thdFloorPct != null) ctx.notes.push(`THD at ${THD_FIGURE_HZ} Hz below ${atFigure.thdFloorPct.toPrecision(2)} % (the noise floor).`)
  let maxThd = -1
  let maxFloor: number | null = null
  for (let i = 0; i < freqHz.length; i++) {
    const f = freqHz[i]!
    if (f < THD_MAX_LOW_FACTOR * sweep.f1Hz || THD_MAX_TOP_ORDER * f > fTopValid) continue
    const fl = floors[i]
    if (fl != null && (maxFloor === null || fl > maxFloor)) maxFloor = fl
    const th = curves.thdPct[i]
    if (th != null && th > maxThd) {
      maxThd = th
      params.thdMaxAtHz = f
    }
  }
  params.thdMaxPct = maxThd >= 0 ? maxThd : null
  if (!noise) return
  const band: [number, number] = [THD_MAX_LOW_FACTOR * sweep.f1Hz, fTopValid / THD_MAX_TOP_ORDER]
  params.thdMaxBandHz = band
  // Nothing clear of the floor in the band: the THD is below the floor's highest point there.
  if (params.thdMaxPct === null && maxFloor !== null) {
    params.thdMaxFloorPct = maxFloor
    ctx.notes.push(`THD below ${maxFloor.toPrecision(2)} % from ${band[0].toFixed(0)} Hz to ${band[1].toFixed(0)} Hz (the noise floor).`)
  }
}
