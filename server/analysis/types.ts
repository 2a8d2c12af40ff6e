import type { ChannelRole } from '../../shared/utils/station-profile.ts'
import type { ResultFigures } from '../../shared/types/api.ts'
import type { ClassicalResult } from './small-signal.ts'

export interface AnalyzeOptions {
  /** Ambient temperature during the test; enables the 20 °C referral of Re. */
  ambientC?: number
  /** Band for the sensitivity figure, default [300, 3000] Hz. */
  sensitivityBandHz?: [number, number]
  /** Frequencies for the THD table, default [100, 1000, 3000] Hz. */
  thdAtHz?: number[]
  /** Rub-and-buzz limit in dB (default RUB_BUZZ_LIMIT_DB); masks may apply their own. */
  rubBuzzLimitDb?: number
  /** Report clipped channels in the flags instead of rejecting the recording. */
  allowClipped?: boolean
}

export interface ThdAtPoint {
  hz: number
  /** Null where it is below the noise floor (then `thdFloorPct` is the bound). */
  thdPct: number | null
  /** The THD the noise alone would read here × the margin; absent in results made before it existed. */
  thdFloorPct?: number | null
  h2Pct: number | null
  h3Pct: number | null
  h4Pct: number | null
  h5Pct: number | null
  splDb: number | null
}

export type PerChannel<T> = { mic: T; drive: T; sense: T }

export interface AnalysisParameters extends ResultFigures {
  fZminHz: number | null
  /** RMS relative misfit of the small-signal model, %. */
  fitErrorPct: number | null
  sensitivityBandHz: [number, number]
  thdMaxAtHz: number | null
  rubBuzzAtHz: number | null
  rubBuzzLimitDb: number
  /** Delay of the acoustic impulse behind the drive, ms. */
  acousticDelayMs: number | null
  /** Drive RMS over sense-current RMS during the sweep (open/short detection), Ω. */
  effectiveImpedanceOhm: number | null
  snrDb: PerChannel<number | null>
  peakDbfs: PerChannel<number | null>
  /*
   * What a real line adds to a recording, and the figures' uncertainties. They live among the
   * parameters so they are stored with them and a later judgement (a mask released afterwards) sees
   * them. Absent in results made before they existed.
   */
  /** Played level over the profile's, dB (drive plus sense: the amplifier's output). */
  levelOffsetDb?: number | null
  /** ± of the sensitivity, dB (k = 2), from the noise in its band. */
  sensitivityUncertaintyDb?: number | null
  /** Median level of the rub-and-buzz blocks: the residual's noise floor, dB. */
  rubBuzzFloorDb?: number | null
  /** Per point of the frequency grid: ± of the response, dB (k = 2). */
  splUncertaintyDb?: (number | null)[] | null
  /**
   * Per point of the frequency grid: the THD below which a reading is not told apart from the noise
   * (where `curves.thdPct` is null but this is not, the THD is below this bound).
   */
  thdFloorPct?: (number | null)[] | null
  /** Band the THD maximum (`thdMaxPct`) is searched in, Hz; a mask without a THD band is judged over it. */
  thdMaxBandHz?: [number, number] | null
  /** When no THD in that band stands clear of the floor (`thdMaxPct` null): the floor's highest point there, the bound. */
  thdMaxFloorPct?: number | null
  disturbances?: Disturbance[]
  /** Things the station should look at that do not change the verdict. */
  warnings?: string[]
}

/**
 * Something the recording shows that the unit did not cause. `retest`: by itself it keeps the
 * recording from deciding (a knock loud enough to read as rub and buzz, a level far from the profile).
 * `fromHz`/`toHz`: the part of the sweep it disturbed.
 */
export interface Disturbance {
  code: 'hum' | 'noise' | 'transient' | 'level' | 'probe_fault'
  note: string
  retest: boolean
  atS?: number
  fromHz?: number
  toHz?: number
}

export interface AnalysisCurves {
  freqHz: number[]
  impedanceOhm: (number | null)[] | null
  impedancePhaseDeg: (number | null)[] | null
  splDb: (number | null)[] | null
  splPhaseDeg: (number | null)[] | null
  thdPct: (number | null)[] | null
  h2Pct: (number | null)[] | null
  h3Pct: (number | null)[] | null
  h4Pct: (number | null)[] | null
  h5Pct: (number | null)[] | null
}

export interface AnalysisFlags {
  polarity: 'normal' | 'inverted' | null
  openCoil: boolean
  shortedCoil: boolean
  clippedChannels: ChannelRole[]
  lowSnrChannels: ChannelRole[]
  /** Rub-and-buzz level above its limit; null when not measured. */
  rubBuzz: boolean | null
  /**
   * The impedance covers the band where a driver resonates and shows no resonance peak there (a
   * blocked cone, or no driver at all): a unit fault. Absent in results made before it existed.
   */
  noResonance?: boolean
}

export interface AnalysisTimings {
  validate: number
  /** DC removal (absent in results made before it existed). */
  condition?: number
  deconvolve: number
  impedance: number
  fit: number
  response: number
  distortion: number
  rubBuzz: number
  total: number
}

export interface AnalysisResult {
  engineVersion: string
  kind: 'sweep' | 'impedance_table'
  sampleRateHz: number | null
  format: { encoding: string; bitsPerSample: number; channels: number; frames: number; extensible: boolean } | null
  timingsMs: AnalysisTimings
  parameters: AnalysisParameters
  /** Classical three-point estimate, kept as a cross-check of the fit. */
  classical: ClassicalResult | null
  curves: AnalysisCurves
  flags: AnalysisFlags
  thdAt: ThdAtPoint[]
  /** Names of the figures that could not be measured (see `notes` for why). */
  unmeasured: string[]
  notes: string[]
}
