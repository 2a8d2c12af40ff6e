import type { StationProfile } from '../../shared/utils/station-profile.ts'

/**
 * Exponential sine sweep (Farina, AES preprint 5093, 2000):
 *   x(t) = sin(2π·f1·T/L·(e^(t·L/T) − 1)),  L = ln(f2/f1).
 */

/** Half-Hann fade at each end of the generated sweep (the station convention used by the demo). */
export const SWEEP_FADE_S = 0.01

export type SweepSpec = StationProfile['sweep']

export function sweepRate(sweep: SweepSpec): number {
  return Math.log(sweep.f2Hz / sweep.f1Hz) / sweep.durationS
}

/** Instantaneous frequency (Hz) of the sweep at time t seconds after its start. */
export function sweepFrequencyAt(sweep: SweepSpec, tS: number): number {
  return sweep.f1Hz * Math.exp(tS * sweepRate(sweep))
}

/** Time (s) after the sweep start at which it passes through frequency f. */
export function sweepTimeAt(sweep: SweepSpec, fHz: number): number {
  return Math.log(fHz / sweep.f1Hz) / sweepRate(sweep)
}

/**
 * Advance (s) of the k-th harmonic impulse response ahead of the linear one after
 * deconvolution: T·ln(k)/ln(f2/f1) (Farina 2000).
 */
export function harmonicDelayS(k: number, sweep: Pick<SweepSpec, 'f1Hz' | 'f2Hz' | 'durationS'>): number {
  return (sweep.durationS * Math.log(k)) / Math.log(sweep.f2Hz / sweep.f1Hz)
}

/**
 * Samples of the sweep with peak amplitude `amplitude`, `fadeS` half-Hann fades at both ends.
 */
export function generateSweep(sweep: SweepSpec, sampleRate: number, amplitude: number, fadeS = SWEEP_FADE_S): Float64Array {
  const n = Math.round(sweep.durationS * sampleRate)
  const out = new Float64Array(n)
  const L = Math.log(sweep.f2Hz / sweep.f1Hz)
  const k = (2 * Math.PI * sweep.f1Hz * sweep.durationS) / L
  const fadeN = Math.max(1, Math.round(fadeS * sampleRate))
  for (let i = 0; i < n; i++) {
    const t = i / sampleRate
    let g = amplitude
    if (i < fadeN) g *= 0.5 - 0.5 * Math.cos((Math.PI * i) / fadeN)
    else if (i >= n - fadeN) g *= 0.5 - 0.5 * Math.cos((Math.PI * (n - 1 - i)) / fadeN)
    out[i] = g * Math.sin(k * (Math.exp((t * L) / sweep.durationS) - 1))
  }
  return out
}
