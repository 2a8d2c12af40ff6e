/**
 * Rub and buzz (our metric, see docs/method.md, "Rub and buzz"): the high-order part of the
 * deconvolved response (orders ≥ RUB_BUZZ_MIN_ORDER, which arrive earliest, Farina 2000) is
 * re-convolved with the stimulus, giving the high-order residual in time, band-limited to the buzz
 * band. Per block of two sweep cycles: peak residual over peak mic signal; the level is the worst block
 * locked to the drive (a knock is reported as a disturbance instead, transient.ts).
 */
import type { SweepContext } from '../context.ts'
import { LINEAR_WINDOW_S, RUB_BUZZ_BAND_LOW_HZ, RUB_BUZZ_MIN_ORDER, USABLE_BOTTOM_FACTOR } from '../constants.ts'
import { halfHann } from '../dsp.ts'
import { irfft, rfft, workBuffer } from '../fft.ts'
import { harmonicDelayS, sweepFrequencyAt, sweepRate, sweepTimeAt } from '../sweep.ts'
import { residualEvents, residualFloorDb, type ResidualBlock } from '../transient.ts'
import type { StationProfile } from '../../../shared/utils/station-profile.ts'

/** Cycles of the sweep per rub-and-buzz block. */
export const RUB_BUZZ_BLOCK_CYCLES = 2
/** Shortest block (at the top of the sweep, where two cycles are very short). */
export const RUB_BUZZ_MIN_BLOCK_S = 0.005
/** Share of the high-order segment at each end given to its half-Hann tapers (a gentle cut). */
export const RUB_BUZZ_TAPER_FRACTION = 0.05
/**
 * Guard after the linear window: the high-order segment, which wraps round from the end of the
 * response, must stop this much short of the linear window's end so none of the linear response's
 * tail leaks into the residual.
 */
export const RUB_BUZZ_LINEAR_GUARD_S = 0.05
/** Fewest samples the high-order segment must span to be measured at all. */
const RUB_BUZZ_MIN_SEGMENT_SAMPLES = 16

export function rubBuzz(ctx: SweepContext): void {
  const mic = ctx.channels.mic
  if (!ctx.acoustic || !mic || !ctx.spectra) return
  const rb = rubBuzzLevel(ctx.acoustic.ha, ctx.spectra.Xa, mic, ctx.acoustic.peakIdx, ctx.profile, ctx.fs, ctx.windows.fTopValid, ctx.played?.offsetFrames ?? 0)
  if (!rb) {
    ctx.unmeasured.push('rub_buzz')
    return
  }
  // A buzz is locked to the drive; a knock is not (transient.ts). The level is the loudest part
  // locked to the drive, or, with none, the loudest block outside the knocks: the floor's own peak.
  const floor = residualFloorDb(rb.blocks)
  const events = floor === null ? [] : residualEvents(rb.r, rb.blocks, floor, ctx.fs, (i) => sweepFrequencyAt(ctx.profile.sweep, (i - rb.start) / ctx.fs))
  const inKnock = new Set(events.filter((e) => e.transient).flatMap((e) => e.blocks))
  let level = Number.NEGATIVE_INFINITY
  let atS = 0
  for (const e of events) if (e.lockedLevelDb !== null && e.lockedLevelDb > level) [level, atS] = [e.lockedLevelDb, e.atS]
  rb.blocks.forEach((b, i) => {
    if (!inKnock.has(i) && b.levelDb > level) [level, atS] = [b.levelDb, b.atS]
  })
  if (!Number.isFinite(level)) [level, atS] = [rb.levelDb, sweepTimeAt(ctx.profile.sweep, rb.atHz)]
  ctx.params.rubBuzzDb = level
  ctx.params.rubBuzzAtHz = sweepFrequencyAt(ctx.profile.sweep, atS)
  ctx.params.rubBuzzFloorDb = floor
  ctx.flags.rubBuzz = level > ctx.rubBuzzLimitDb
  for (const e of events.filter((x) => x.transient)) {
    const sweep = ctx.profile.sweep
    // The linear window reads the mic over LINEAR_WINDOW_S after each frequency's moment, so a knock
    // disturbs the frequencies the sweep passed in the LINEAR_WINDOW_S before it (and its own).
    const fromHz = sweepFrequencyAt(sweep, Math.max(0, e.atS - LINEAR_WINDOW_S))
    const toHz = sweepFrequencyAt(sweep, Math.min(sweep.durationS, e.atS + KNOCK_SPAN_AFTER_S))
    // Loud enough to read as rub and buzz: measure again, unless what is locked to the drive under
    // it fails the unit anyway.
    const retest = e.levelDb > ctx.rubBuzzLimitDb && !(e.lockedLevelDb !== null && e.lockedLevelDb > ctx.rubBuzzLimitDb)
    ;(ctx.params.disturbances ??= []).push({
      code: 'transient',
      note: `A short sound not caused by the unit (a knock?) ${e.atS.toFixed(2)} s into the sweep, ${e.levelDb.toFixed(0)} dB re the sweep's peak${retest ? ': measure again' : ''}.`,
      retest,
      atS: e.atS,
      fromHz,
      toHz,
    })
  }
}

/** A knock disturbs the sweep for about this long after it (its decay and the room's). */
const KNOCK_SPAN_AFTER_S = 0.03

/** The worst block's level (dB re the mic's peak) and the sweep frequency there; null when not measurable. */
export function rubBuzzLevel(
  ha: Float64Array,
  Xa: Float64Array,
  mic: Float64Array,
  peakIdx: number,
  profile: StationProfile,
  fs: number,
  fTopValid: number,
  sweepOffset = 0,
): { levelDb: number; atHz: number; blocks: ResidualBlock[]; r: Float64Array; start: number } | null {
  const N = ha.length
  const sweep = profile.sweep
  const rate = sweepRate(sweep)
  const linEnd = Math.round((LINEAR_WINDOW_S + RUB_BUZZ_LINEAR_GUARD_S) * fs)
  // Highest order whose impulse still lands clear of the linear window after wrapping.
  const maxAdvance = (N - linEnd) / fs
  const kMax = Math.exp(maxAdvance * rate)
  const startAdv = harmonicDelayS(RUB_BUZZ_MIN_ORDER, sweep) * fs
  const endAdv = Math.min(maxAdvance * fs, harmonicDelayS(Math.min(kMax, sweep.f2Hz / sweep.f1Hz), sweep) * fs)
  if (endAdv <= startAdv + RUB_BUZZ_MIN_SEGMENT_SAMPLES) return null
  const seg = workBuffer('rub-buzz segment', N).fill(0)
  const len = Math.round(endAdv - startAdv)
  const taper = Math.max(1, Math.round(RUB_BUZZ_TAPER_FRACTION * len))
  let src = (((peakIdx - Math.round(endAdv)) % N) + N) % N
  for (let i = 0; i < len; i++) {
    let w = 1
    if (i < taper) w = halfHann(i, taper)
    else if (len - 1 - i < taper) w = halfHann(len - 1 - i, taper)
    seg[src] = ha[src]! * w
    if (++src === N) src = 0
  }
  const Hh = rfft(seg, N)
  const binHz = fs / N
  const bLo = Math.ceil(RUB_BUZZ_BAND_LOW_HZ / binHz)
  const bHi = Math.floor(fTopValid / binHz)
  const R = workBuffer('rub-buzz spectrum', N + 2).fill(0)
  for (let b = bLo; b <= bHi; b++) {
    const hr = Hh[2 * b]!
    const hi = Hh[2 * b + 1]!
    const xr = Xa[2 * b]!
    const xi = Xa[2 * b + 1]!
    R[2 * b] = hr * xr - hi * xi
    R[2 * b + 1] = hr * xi + hi * xr
  }
  const r = irfft(R, N, workBuffer('rub-buzz residual', N))
  // Blocks of two sweep cycles from the end of the fade-in to where order 10 leaves the band.
  const start = Math.round(sweep.preSilenceS * fs) + sweepOffset + peakIdx
  const tEnd = Math.log(fTopValid / RUB_BUZZ_MIN_ORDER / sweep.f1Hz) / rate
  const tBegin = Math.log(USABLE_BOTTOM_FACTOR) / rate
  // Reference: the peak of the mic signal over the whole sweep (its loudest fundamental).
  const sweepEndIdx = Math.min(mic.length, start + Math.round(sweep.durationS * fs))
  let pRef = 0
  for (let i = start; i < sweepEndIdx; i++) pRef = Math.max(pRef, Math.abs(mic[i]!))
  if (!(pRef > 0)) return null
  let worst = Number.NEGATIVE_INFINITY
  let worstHz = 0
  const blocks: ResidualBlock[] = []
  let tb = tBegin
  while (tb < Math.min(tEnd, sweep.durationS)) {
    const f = sweep.f1Hz * Math.exp(tb * rate)
    const dur = Math.max(RUB_BUZZ_MIN_BLOCK_S, RUB_BUZZ_BLOCK_CYCLES / f)
    const a = start + Math.round(tb * fs)
    const b = Math.min(mic.length, a + Math.round(dur * fs))
    let pr = 0
    for (let i = a; i < b; i++) {
      const x = Math.abs(r[i]!)
      if (x > pr) pr = x
    }
    if (pr > 0) blocks.push({ start: a, end: b, levelDb: 20 * Math.log10(pr / pRef), atS: tb + dur / 2 })
    if (pr > 0) {
      const lv = 20 * Math.log10(pr / pRef)
      if (lv > worst) {
        worst = lv
        worstHz = sweep.f1Hz * Math.exp((tb + dur / 2) * rate)
      }
    }
    tb += dur
  }
  return Number.isFinite(worst) ? { levelDb: worst, atHz: worstHz, blocks, r, start } : null
}
