/**
 * The measurement engine's entry points. A sweep recording goes through named stages in order,
 * each a module of its own in ./stages/, passing one context (./context.ts):
 *
 *   validate → condition → diagnose (coil) → deconvolve → impedance → fit → diagnose (resonance)
 *            → response → distortion → rub and buzz
 *
 * An impedance table from an external analyser reuses the fit and diagnose helpers.
 */
import { AnalysisInputError } from './errors.ts'
import { standardGrid } from './grid.ts'
import { parseImpedanceTable } from './impedance-table.ts'
import { stationProfileSchema, type StationProfile } from '../../shared/utils/station-profile.ts'
import type { AnalysisFlags, AnalysisResult, AnalysisTimings, AnalyzeOptions } from './types.ts'
import { validateRecording, type ValidatedRecording } from './validate.ts'
import { ENGINE_VERSION } from './version.ts'
import { DEFAULT_SENSITIVITY_BAND_HZ, FIT_HIGH_HZ, RUB_BUZZ_LIMIT_DB } from './constants.ts'
import { createSweepContext, emptyCurves, emptyParameters, type SweepContext } from './context.ts'
import { condition } from './stages/condition.ts'
import { deconvolve } from './stages/deconvolve.ts'
import { diagnoseCoil, diagnoseResonance, diagnoseTableCoil, NO_RESONANCE_NOTE, showsNoResonance } from './stages/diagnose.ts'
import { distortion } from './stages/distortion.ts'
import { applyFit, fit, fitImpedance, gateLowResonance, zminAbove } from './stages/fit.ts'
import { impedance } from './stages/impedance.ts'
import { response } from './stages/response.ts'
import { rubBuzz } from './stages/rub-buzz.ts'

export {
  DEFAULT_SENSITIVITY_BAND_HZ,
  DEFAULT_THD_AT_HZ,
  LOW_SNR_DB,
  OPEN_COIL_OHM,
  REFERENCE_DISTANCE_M,
  REFERENCE_DRIVE_V,
  REFERENCE_PRESSURE_PA,
  RUB_BUZZ_BAND_LOW_HZ,
  RUB_BUZZ_LIMIT_DB,
  RUB_BUZZ_MIN_ORDER,
  SHORTED_COIL_OHM,
  speedOfSoundMs,
} from './constants.ts'

/** The profile, parsed with its defaults. @throws AnalysisInputError `invalid_profile`. */
export function checkProfile(profile: StationProfile): StationProfile {
  const parsed = stationProfileSchema.safeParse(profile)
  if (!parsed.success) {
    throw new AnalysisInputError('invalid_profile', `Invalid station profile: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`)
  }
  return parsed.data
}

type TimedStage = Exclude<keyof AnalysisTimings, 'validate' | 'total'>

/** Runs one stage on the context and records its time under `key`. */
function timed(ctx: SweepContext, key: TimedStage, stage: (ctx: SweepContext) => void): void {
  const t = performance.now()
  stage(ctx)
  ctx.timings[key] = performance.now() - t
}

/**
 * Analyses one station recording (exponential sweep; mic, drive and/or sense channels): its bytes,
 * or the recording validateRecordingSource decoded from a file with the same profile (the worker
 * does that, so it never holds the file's bytes beside the decoded channels). A decoded recording
 * passed in has its channels' DC removed in place (stage condition).
 * @throws AnalysisInputError for bad input or a station fault (see validateRecording).
 */
export function analyzeRecording(bytes: Uint8Array | ValidatedRecording, profileIn: StationProfile, options: AnalyzeOptions = {}): AnalysisResult {
  const tStart = performance.now()
  const profile = checkProfile(profileIn)
  const v = bytes instanceof Uint8Array ? validateRecording(bytes, profile, { allowClipped: options.allowClipped ?? false }) : bytes
  const ctx = createSweepContext(v, profile, options)
  timed(ctx, 'condition', condition)
  diagnoseCoil(ctx)
  timed(ctx, 'deconvolve', deconvolve)
  timed(ctx, 'impedance', impedance)
  timed(ctx, 'fit', (c) => {
    fit(c)
    diagnoseResonance(c)
  })
  timed(ctx, 'response', response)
  timed(ctx, 'distortion', distortion)
  timed(ctx, 'rubBuzz', rubBuzz)
  ctx.timings.total = performance.now() - tStart
  return sweepResult(ctx)
}

/** The result of a sweep analysis, from its context once every stage ran. */
export function sweepResult(ctx: SweepContext): AnalysisResult {
  const v = ctx.recording
  return {
    engineVersion: ENGINE_VERSION,
    kind: 'sweep',
    sampleRateHz: ctx.fs,
    format: { encoding: v.encoding, bitsPerSample: v.bitsPerSample, channels: v.stats.length, frames: v.frames, extensible: v.extensible },
    timingsMs: ctx.timings,
    parameters: ctx.params,
    classical: ctx.classical,
    curves: ctx.curves,
    flags: ctx.flags,
    thdAt: ctx.thdAt,
    unmeasured: [...new Set(ctx.unmeasured)],
    notes: [...ctx.notes, ...(ctx.params.disturbances ?? []).map((d) => d.note)],
  }
}

/**
 * Analyses an impedance table from an external analyser: same result shape as a sweep,
 * with the acoustic parts null.
 * @throws AnalysisInputError for an unreadable table (codes table_*).
 */
export function analyzeImpedanceTable(text: string, options: Pick<AnalyzeOptions, 'ambientC'> & { ratedOhm?: number } = {}): AnalysisResult {
  const tStart = performance.now()
  const table = parseImpedanceTable(text)
  const tParsed = performance.now()
  const { freqHz: tf, magOhm, phaseDeg } = table
  const fMin = tf[0]!
  const fMax = tf[tf.length - 1]!
  const grid = standardGrid(fMax, Math.max(10, fMin))
  const params = emptyParameters(DEFAULT_SENSITIVITY_BAND_HZ, RUB_BUZZ_LIMIT_DB)
  const curves = emptyCurves(grid)
  const re = phaseDeg ? magOhm.map((m, i) => m * Math.cos((phaseDeg[i]! * Math.PI) / 180)) : null
  const im = phaseDeg ? magOhm.map((m, i) => m * Math.sin((phaseDeg[i]! * Math.PI) / 180)) : null
  // Same fit band as for sweeps.
  const idx = tf.map((f, i) => i).filter((i) => tf[i]! <= FIT_HIGH_HZ)
  const pick = <T>(a: T[]): T[] => idx.map((i) => a[i]!)
  const flags: AnalysisFlags = { polarity: null, openCoil: false, shortedCoil: false, clippedChannels: [], lowSnrChannels: [], rubBuzz: null, noResonance: false }
  const notes = ['Impedance table: no acoustic result.']
  const unmeasured = ['spl', 'sensitivity', 'polarity', 'distortion', 'rub_buzz']
  diagnoseTableCoil(magOhm, flags, notes)
  const tFit = performance.now()
  const fitData = { freqHz: pick(tf), re: re && pick(re), mag: pick(magOhm) }
  const unitDead = flags.openCoil || flags.shortedCoil
  const gated = unitDead
    ? { fig: { fit: null, classical: null }, note: 'Impedance not fitted: the coil is open or shorted.' }
    : gateLowResonance(fitImpedance(fitData.freqHz, fitData.re, im && pick(im), fitData.mag), fitData, 'table')
  const { fig, note } = gated
  applyFit(params, fig, options.ambientC)
  const fitMs = performance.now() - tFit
  curves.impedanceOhm = grid.map((f) => interpTable(tf, magOhm, f))
  curves.impedancePhaseDeg = phaseDeg ? grid.map((f) => interpTable(tf, phaseDeg, f)) : null
  if (params.fsHz) {
    const zm = zminAbove(grid, curves.impedanceOhm, params.fsHz)
    if (zm) {
      params.zminOhm = zm.z
      params.fZminHz = zm.f
    }
  }
  if (!fig.fit) {
    unmeasured.push('small_signal')
    flags.noResonance = showsNoResonance(false, note, fitData.mag)
    notes.push(note ?? NO_RESONANCE_NOTE)
  }
  if (!phaseDeg) notes.push('No phase column: the fit used the magnitude only.')
  const total = performance.now() - tStart
  return {
    engineVersion: ENGINE_VERSION,
    kind: 'impedance_table',
    sampleRateHz: null,
    format: null,
    timingsMs: { validate: tParsed - tStart, condition: 0, deconvolve: 0, impedance: 0, fit: fitMs, response: 0, distortion: 0, rubBuzz: 0, total },
    parameters: params,
    classical: fig.classical,
    curves,
    flags,
    thdAt: [],
    unmeasured,
    notes,
  }
}

function interpTable(f: number[], v: number[], x: number): number | null {
  if (x < f[0]! || x > f[f.length - 1]!) return null
  let lo = 0
  let hi = f.length - 1
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1
    if (f[mid]! <= x) lo = mid
    else hi = mid
  }
  if (lo === hi) return v[lo]!
  const t = Math.log(x / f[lo]!) / Math.log(f[hi]! / f[lo]!)
  return v[lo]! + (v[hi]! - v[lo]!) * t
}
