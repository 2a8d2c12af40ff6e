/**
 * Fit: the small-signal parameters (Re, Le, Fs, Qms, Qes) from the measured impedance, by the
 * lumped-model fit of small-signal.ts on complex points read off the windowed admittance at
 * FIT_POINTS_PER_OCTAVE from FIT_LOW_FACTOR·f1 to FIT_HIGH_HZ; a resonance too close to the bottom
 * of the data is withheld with a note (the no-resonance diagnosis follows in diagnose.ts).
 * The helpers serve impedance tables too (analyzeImpedanceTable).
 */
import type { SweepContext } from '../context.ts'
import { FIT_HIGH_HZ, FIT_LOW_FACTOR, FIT_POINTS_PER_OCTAVE } from '../constants.ts'
import { logSpaced } from '../grid.ts'
import { fitSmallSignal, lowestMeasurableFsHz, reAt20C, resonanceAtBottom, seedSmallSignal, type ClassicalResult, type FitResult } from '../small-signal.ts'
import type { AnalysisParameters } from '../types.ts'

/** Lowest frequency of the fit band, whatever the sweep (Hz). */
const FIT_FLOOR_HZ = 10

export interface ImpedanceFigures {
  fit: FitResult | null
  classical: ClassicalResult | null
}

/** Seeds and runs the small-signal fit on impedance points (complex when `im` is given). */
export function fitImpedance(freqHz: number[], re: number[] | null, im: number[] | null, mag: number[]): ImpedanceFigures {
  const seeded = seedSmallSignal(freqHz, re, im, mag)
  if (seeded === null) return { fit: null, classical: null }
  const fit = re && im ? fitSmallSignal({ freqHz, re, im }, seeded.seed) : fitSmallSignal({ freqHz, mag }, seeded.seed)
  const ok = [fit.reOhm, fit.fsHz, fit.qms, fit.qes, fit.leH].every((v) => Number.isFinite(v) && v > 0)
  return { fit: ok ? fit : null, classical: seeded.classical }
}

const hz = (f: number): string => (f < 100 ? f.toFixed(1) : f.toFixed(0))

/**
 * Withholds a fit whose resonance lies too close to the bottom of the data: at or below the lowest
 * fitted frequency, or less than half an octave above the start of the measurement (see
 * lowestMeasurableFsHz). Returns the figures to report and, when withheld, the note saying why.
 */
export function gateLowResonance(
  fig: ImpedanceFigures,
  data: { freqHz: number[]; re: number[] | null; mag: number[] },
  what: 'sweep' | 'table',
  sweepStartHz = 0,
): { fig: ImpedanceFigures; note: string | null } {
  const lowest = data.freqHz[0]
  if (lowest === undefined) return { fig, note: null }
  const start = what === 'sweep' ? sweepStartHz : lowest
  const limit = lowestMeasurableFsHz(start, lowest)
  const fs = fig.fit?.fsHz
  const none: ImpedanceFigures = { fit: null, classical: null }
  const bottom = what === 'sweep' ? `the sweep's lowest valid frequency (${hz(lowest)} Hz): start the sweep lower.` : `the table's lowest frequency (${hz(lowest)} Hz): export the table from lower down.`
  if (fs !== undefined && fs >= limit) return { fig, note: null }
  if (fs !== undefined && fs > lowest) {
    const whose = what === 'sweep' ? `the sweep start (${hz(start)} Hz)` : `the table's first frequency (${hz(start)} Hz)`
    const fix = what === 'sweep' ? 'start the sweep at' : 'export the table from'
    return { fig: none, note: `Resonance near ${hz(fs)} Hz, less than half an octave above ${whose}: ${fix} ${hz(fs / Math.SQRT2)} Hz or lower for a trustworthy Fs and Qms.` }
  }
  if (fs !== undefined || resonanceAtBottom(data.freqHz, data.re, data.mag)) return { fig: none, note: `Resonance at or below ${bottom}` }
  return { fig, note: null }
}

/** Copies a fit's figures into the parameters (Re also referred to 20 °C when the ambient is known). */
export function applyFit(params: AnalysisParameters, fig: ImpedanceFigures, ambientC: number | undefined): void {
  const f = fig.fit
  if (!f) return
  params.reOhm = f.reOhm
  params.ambientC = ambientC ?? null
  params.re20Ohm = ambientC === undefined ? null : reAt20C(f.reOhm, ambientC)
  params.fsHz = f.fsHz
  params.qms = f.qms
  params.qes = f.qes
  params.qts = f.qts
  params.leMh = f.leH * 1000
  params.zmaxOhm = f.zmaxOhm
  params.fitErrorPct = f.rmsErrorPct
}

/** The impedance minimum above a frequency (above Fs: the rated-impedance check's figure). */
export function zminAbove(freqHz: number[], mag: (number | null)[], aboveHz: number): { z: number; f: number } | null {
  let best: { z: number; f: number } | null = null
  for (let i = 0; i < freqHz.length; i++) {
    const m = mag[i]
    if (m === null || m === undefined || freqHz[i]! <= aboveHz) continue
    if (best === null || m < best.z) best = { z: m, f: freqHz[i]! }
  }
  return best
}

export function fit(ctx: SweepContext): void {
  const Yw = ctx.admittance
  if (!Yw) return
  const { params, curves, senseOhm: R } = ctx
  const sweep = ctx.profile.sweep
  const { fTopValid, linBinHz } = ctx.windows
  const fLo = Math.max(sweep.f1Hz * FIT_LOW_FACTOR, FIT_FLOOR_HZ)
  const fHi = Math.min(FIT_HIGH_HZ, fTopValid)
  const fre: number[] = []
  const zre: number[] = []
  const zim: number[] = []
  const zmag: number[] = []
  let lastBin = -1
  for (const f of logSpaced(fLo, fHi, FIT_POINTS_PER_OCTAVE)) {
    const b = Math.round(f / linBinHz)
    if (b === lastBin) continue
    lastBin = b
    const yr = Yw[2 * b]!
    const yi = Yw[2 * b + 1]!
    const d = yr * yr + yi * yi
    fre.push(b * linBinHz)
    zre.push((R * yr) / d)
    zim.push((-R * yi) / d)
    zmag.push(R / Math.sqrt(d))
  }
  const { fig, note } = gateLowResonance(fitImpedance(fre, zre, zim, zmag), { freqHz: fre, re: zre, mag: zmag }, 'sweep', sweep.f1Hz)
  ctx.classical = fig.classical
  ctx.fit = { fit: fig.fit, classical: fig.classical, withheldNote: note, fittedMagOhm: zmag }
  applyFit(params, fig, ctx.options.ambientC)
  if (curves.impedanceOhm && params.fsHz) {
    const zm = zminAbove(ctx.freqHz, curves.impedanceOhm, params.fsHz)
    if (zm) {
      params.zminOhm = zm.z
      params.fZminHz = zm.f
    }
  }
}
