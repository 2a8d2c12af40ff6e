/**
 * Frequency grids and fractional-octave smoothing.
 * Base-10 octave ratio G = 10^(3/10) and reference frequency 1 kHz of IEC 61260-1:2014 (5.2).
 * The curve grid f = 1000·G^(x/24) is ours: every eighth point is an exact one-third-octave
 * mid-band frequency (5.4, odd b: f = 1000·G^(x/b)); for an even b the standard shifts the
 * mid-bands by half a band, so the other points are grid points, not its 1/24-octave mid-bands.
 */

export const OCTAVE_RATIO_BASE10 = Math.pow(10, 3 / 10)
export const REFERENCE_FREQUENCY_HZ = 1000
export const GRID_BANDS_PER_OCTAVE = 24
export const GRID_MIN_HZ = 10

/** IEC 61260-1 nominal one-third-octave mid-band frequencies, 10 Hz to 20 kHz. */
export const NOMINAL_THIRD_OCTAVE_HZ = [
  10, 12.5, 16, 20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000,
  1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000, 20000,
] as const

/** Exact mid-band frequency of band index x on the 1/b-octave base-10 series. */
export function bandCentreHz(x: number, bandsPerOctave = GRID_BANDS_PER_OCTAVE): number {
  return REFERENCE_FREQUENCY_HZ * Math.pow(OCTAVE_RATIO_BASE10, x / bandsPerOctave)
}

/** The standard log grid from `fMinHz` to `fMaxHz` inclusive (1/24 octave unless told). */
export function standardGrid(fMaxHz: number, fMinHz = GRID_MIN_HZ, bandsPerOctave = GRID_BANDS_PER_OCTAVE): number[] {
  const perDecade = (10 * bandsPerOctave) / 3 // G^(b·10/3 / b) = 10
  const xMin = Math.ceil(perDecade * Math.log10(fMinHz / REFERENCE_FREQUENCY_HZ) - 1e-9)
  const xMax = Math.floor(perDecade * Math.log10(fMaxHz / REFERENCE_FREQUENCY_HZ) + 1e-9)
  const out: number[] = []
  for (let x = xMin; x <= xMax; x++) out.push(bandCentreHz(x, bandsPerOctave))
  return out
}

/** Linear interpolation in log-frequency of `values` (nulls break the curve) at `fHz`. */
export function valueAtHz(freqHz: readonly number[], values: readonly (number | null)[], fHz: number): number | null {
  const n = freqHz.length
  if (n === 0 || fHz < freqHz[0]! || fHz > freqHz[n - 1]!) return null
  let lo = 0
  let hi = n - 1
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1
    if (freqHz[mid]! <= fHz) lo = mid
    else hi = mid
  }
  const a = values[lo]
  const b = values[hi]
  if (a === null || a === undefined || b === null || b === undefined) return null
  if (hi === lo) return a
  const t = Math.log(fHz / freqHz[lo]!) / Math.log(freqHz[hi]! / freqHz[lo]!)
  return a + (b - a) * Math.min(1, Math.max(0, t))
}

export type SmoothingFraction = 3 | 6 | 12

/**
 * Fractional-octave smoothing: each point becomes the mean over ±1/(2·fraction) octave.
 * `mode: 'power'` averages dB values as power (SPL); `'linear'` averages the values themselves
 * (impedance magnitude, percentages). Nulls are skipped and stay null.
 */
export function smoothFractionalOctave(
  freqHz: readonly number[],
  values: readonly (number | null)[],
  fraction: SmoothingFraction,
  mode: 'power' | 'linear' = 'linear',
): (number | null)[] {
  const n = freqHz.length
  const lin = new Float64Array(n)
  const valid = new Uint8Array(n)
  for (let i = 0; i < n; i++) {
    const v = values[i]
    if (v !== null && v !== undefined && Number.isFinite(v)) {
      lin[i] = mode === 'power' ? Math.pow(10, v / 10) : v
      valid[i] = 1
    }
  }
  const sum = new Float64Array(n + 1)
  const cnt = new Float64Array(n + 1)
  for (let i = 0; i < n; i++) {
    sum[i + 1] = sum[i]! + lin[i]!
    cnt[i + 1] = cnt[i]! + valid[i]!
  }
  const half = Math.pow(2, 1 / (2 * fraction))
  const out: (number | null)[] = new Array(n).fill(null)
  let lo = 0
  let hi = 0
  for (let i = 0; i < n; i++) {
    if (!valid[i]) continue
    const fLo = freqHz[i]! / half
    const fHi = freqHz[i]! * half
    while (lo < n && freqHz[lo]! < fLo) lo++
    if (hi < i) hi = i
    while (hi + 1 < n && freqHz[hi + 1]! <= fHi) hi++
    const c = cnt[hi + 1]! - cnt[lo]!
    const s = sum[hi + 1]! - sum[lo]!
    const m = s / c
    out[i] = mode === 'power' ? 10 * Math.log10(m) : m
  }
  return out
}

/** Log-spaced frequencies from a to b with `perOctave` points per octave (inclusive of a). */
export function logSpaced(aHz: number, bHz: number, perOctave: number): number[] {
  const out: number[] = []
  const step = Math.pow(2, 1 / perOctave)
  for (let f = aHz; f <= bHz * (1 + 1e-12); f *= step) out.push(f)
  return out
}
