/**
 * Mains hum: found in the quiet parts of a channel (before the sweep and after it), fitted as a
 * stationary sum of sines at the mains frequency and its odd harmonics, and subtracted from the
 * whole channel before anything is transformed. A ground loop's hum is steady over the few seconds
 * of a test, so what the quiet parts show is what lies under the sweep too.
 */

/** Mains frequencies (IEC 60038: 50 Hz and 60 Hz systems). */
export const MAINS_HZ = [50, 60] as const
/**
 * Harmonics fitted: the fundamental and the odd ones a transformer's or rectifier's magnetising
 * current makes strongest (common practice: 3rd and 5th dominate a ground loop's hum).
 */
export const HUM_HARMONICS = [1, 3, 5] as const
/** Mains frequency may stray this far from nominal (EN 50160: ±1 % of 50 Hz for 99.5 % of a year). */
export const HUM_SEARCH_HZ = 0.5
/** Coarse and fine steps of the frequency search, Hz. */
const COARSE_STEP_HZ = 0.05
const FINE_STEP_HZ = 0.002
/** Fewest quiet samples, in cycles of the mains fundamental, that give a usable fit. */
const MIN_QUIET_CYCLES = 4
/**
 * Hum is found when the fitted sines carry this many times the power a fit of pure noise would
 * (our threshold: 20 dB, where a chance fit of noise is vanishingly rare).
 */
export const HUM_DETECT_POWER_RATIO = 100
/** The cheap first test: this much of the longest quiet span, these orders, this threshold (10 dB). */
const PRETEST_S = 0.1
const PRETEST_ORDERS = [1, 3] as const
const PRETEST_POWER_RATIO = 10

export interface QuietSpan {
  start: number
  end: number
}

export interface HumFit {
  /** Fitted fundamental, Hz. */
  f0Hz: number
  /** Per harmonic order (HUM_HARMONICS): cosine and sine amplitudes, in the channel's units. */
  lines: { order: number; a: number; b: number }[]
  /** RMS of the fitted hum, in the channel's units. */
  rms: number
}

interface Sums {
  cc: number
  ss: number
  cs: number
  xc: number
  xs: number
}

/** Least-squares sine and cosine amplitudes at `hz` over the quiet spans (2×2 normal equations). */
function fitLine(x: Float64Array, spans: readonly QuietSpan[], hz: number, fs: number): { a: number; b: number; power: number } {
  const s: Sums = { cc: 0, ss: 0, cs: 0, xc: 0, xs: 0 }
  const w = (2 * Math.PI * hz) / fs
  const cw = Math.cos(w)
  const sw = Math.sin(w)
  for (const span of spans) {
    // A rotating phasor instead of a sine and a cosine per sample.
    let c = Math.cos(w * span.start)
    let sn = Math.sin(w * span.start)
    for (let i = span.start; i < span.end; i++) {
      const v = x[i]!
      s.cc += c * c
      s.ss += sn * sn
      s.cs += c * sn
      s.xc += v * c
      s.xs += v * sn
      const nc = c * cw - sn * sw
      sn = sn * cw + c * sw
      c = nc
    }
  }
  const det = s.cc * s.ss - s.cs * s.cs
  if (!(det > 0)) return { a: 0, b: 0, power: 0 }
  const a = (s.xc * s.ss - s.xs * s.cs) / det
  const b = (s.xs * s.cc - s.xc * s.cs) / det
  // Power the fit explains over the spans.
  return { a, b, power: a * s.xc + b * s.xs }
}

function fitAt(x: Float64Array, spans: readonly QuietSpan[], f0: number, fs: number): { lines: HumFit['lines']; power: number } {
  let power = 0
  const lines = HUM_HARMONICS.map((order) => {
    const l = fitLine(x, spans, order * f0, fs)
    power += l.power
    return { order, a: l.a, b: l.b }
  })
  return { lines, power }
}

function bestBetween(x: Float64Array, spans: readonly QuietSpan[], fs: number, lo: number, hi: number, step: number): { f0: number; power: number } {
  let best = { f0: lo, power: -1 }
  for (let f = lo; f <= hi + step / 2; f += step) {
    const p = fitAt(x, spans, f, fs).power
    if (p > best.power) best = { f0: f, power: p }
  }
  return best
}

/** Golden-section search for the fitted power's peak between lo and hi, down to FINE_STEP_HZ. */
function refine(x: Float64Array, spans: readonly QuietSpan[], fs: number, lo: number, hi: number): number {
  const g = (Math.sqrt(5) - 1) / 2
  let a = lo
  let b = hi
  let c = b - g * (b - a)
  let d = a + g * (b - a)
  let pc = fitAt(x, spans, c, fs).power
  let pd = fitAt(x, spans, d, fs).power
  while (b - a > FINE_STEP_HZ) {
    if (pc > pd) {
      b = d
      d = c
      pd = pc
      c = b - g * (b - a)
      pc = fitAt(x, spans, c, fs).power
    } else {
      a = c
      c = d
      pc = pd
      d = a + g * (b - a)
      pd = fitAt(x, spans, d, fs).power
    }
  }
  return (a + b) / 2
}

/**
 * The cheap test run on every channel first: the fundamental and 3rd harmonic at the nominal
 * frequencies over at most PRETEST_S of the longest quiet span, short enough that a mains
 * frequency off by HUM_SEARCH_HZ stays coherent, against a lower threshold than the full search.
 */
function humLikely(x: Float64Array, spans: readonly QuietSpan[], fs: number): boolean {
  const longest = spans.reduce((a, s) => (s.end - s.start > a.end - a.start ? s : a))
  const span = { start: longest.start, end: Math.min(longest.end, longest.start + Math.round(PRETEST_S * fs)) }
  const n = span.end - span.start
  let energy = 0
  for (let i = span.start; i < span.end; i++) energy += x[i]! * x[i]!
  const chance = (2 * energy) / n
  return MAINS_HZ.some((f0) => PRETEST_ORDERS.some((k) => fitLine(x, [span], k * f0, fs).power > PRETEST_POWER_RATIO * chance))
}

/**
 * Looks for mains hum in the quiet spans of one channel. Null when the spans are too short or
 * carry no hum above their noise.
 */
export function findHum(x: Float64Array, spans: readonly QuietSpan[], fs: number): HumFit | null {
  const usable = spans.filter((s) => s.end > s.start)
  const n = usable.reduce((a, s) => a + s.end - s.start, 0)
  if (n < (MIN_QUIET_CYCLES * fs) / MAINS_HZ[0]) return null
  if (!humLikely(x, usable, fs)) return null
  let energy = 0
  for (const s of usable) for (let i = s.start; i < s.end; i++) energy += x[i]! * x[i]!
  if (!(energy > 0)) return null
  // A fit of white noise explains about 2 samples' worth of its power per line, so a real hum's
  // share stands far above that.
  const chance = (2 * HUM_HARMONICS.length * energy) / n
  let best: { f0: number; power: number } | null = null
  for (const nominal of MAINS_HZ) {
    const coarse = bestBetween(x, usable, fs, nominal - HUM_SEARCH_HZ, nominal + HUM_SEARCH_HZ, COARSE_STEP_HZ)
    if (coarse.power > HUM_DETECT_POWER_RATIO * chance && (!best || coarse.power > best.power)) best = coarse
  }
  if (!best) return null
  const f0 = refine(x, usable, fs, best.f0 - COARSE_STEP_HZ, best.f0 + COARSE_STEP_HZ)
  const { lines } = fitAt(x, usable, f0, fs)
  const rms = Math.sqrt(lines.reduce((a, l) => a + (l.a * l.a + l.b * l.b) / 2, 0))
  return { f0Hz: f0, lines, rms }
}

/** Subtracts a fitted hum from samples [0, end) of the channel, in place. */
export function removeHum(x: Float64Array, hum: HumFit, fs: number, end = x.length): void {
  for (const l of hum.lines) {
    const w = (2 * Math.PI * l.order * hum.f0Hz) / fs
    const cw = Math.cos(w)
    const sw = Math.sin(w)
    let c = 1
    let s = 0
    for (let i = 0; i < end; i++) {
      x[i] = x[i]! - (l.a * c + l.b * s)
      const nc = c * cw - s * sw
      s = s * cw + c * sw
      c = nc
    }
  }
}
