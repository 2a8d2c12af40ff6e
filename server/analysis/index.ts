/** Conetrail measurement engine: pure functions, no framework, database or HTTP imports. */
export { ENGINE_VERSION } from './version.ts'
export { ANALYSIS_ERROR_CODES, AnalysisInputError, type AnalysisErrorCode } from './errors.ts'
export {
  CHANNEL_ROLES,
  DEFAULT_PROFILE,
  DEFAULT_SWEEP,
  stationProfileSchema,
  sweepSchema,
  type ChannelRole,
  type StationProfile,
  type StationProfileInput,
} from '../../shared/utils/station-profile.ts'
export { parseWavLayout, readWavLayout, decodeChannel, MAX_RECORDING_BYTES, type ByteSource, type WavLayout, type SampleEncoding } from './wav-reader.ts'
export {
  validateRecording,
  validateRecordingSource,
  analysisFrames,
  analysisFramesOf,
  MAX_ANALYSIS_FRAMES,
  ANALYSIS_TAIL_S,
  PROBE_FAULT_MIC_SNR_DB,
  VALIDATION_BLOCK_BYTES,
  MIN_SAMPLE_RATE_HZ,
  MAX_SAMPLE_RATE_HZ,
  CLIP_THRESHOLD,
  CLIP_RUN_SAMPLES,
  type ChannelStats,
  type ValidatedRecording,
  type ValidateOptions,
} from './validate.ts'
export { analysisMemoryBytes, ANALYSIS_WORKING_ARRAYS } from './memory.ts'
export {
  analyzeRecording,
  analyzeImpedanceTable,
  checkProfile,
  speedOfSoundMs,
  DEFAULT_SENSITIVITY_BAND_HZ,
  DEFAULT_THD_AT_HZ,
  OPEN_COIL_OHM,
  SHORTED_COIL_OHM,
  REFERENCE_DRIVE_V,
  REFERENCE_PRESSURE_PA,
  RUB_BUZZ_BAND_LOW_HZ,
  RUB_BUZZ_LIMIT_DB,
  RUB_BUZZ_MIN_ORDER,
} from './analyze.ts'
export { parseImpedanceTable, MIN_TABLE_POINTS, MAX_TABLE_POINTS, MAX_TABLE_LINES, type ImpedanceTable } from './impedance-table.ts'
export {
  checkRatedImpedance,
  classicalThreePoint,
  copperResistanceAt,
  fitSmallSignal,
  lowestMeasurableFsHz,
  modelImpedance,
  qtsOf,
  reAt20C,
  seedSmallSignal,
  COPPER_ALPHA_PER_K,
  MIN_START_OCTAVES_BELOW_FS,
  RATED_IMPEDANCE_MIN_FRACTION,
  type ClassicalResult,
  type FitResult,
  type RatedImpedanceCheck,
  type SmallSignalParams,
} from './small-signal.ts'
export {
  bandCentreHz,
  logSpaced,
  smoothFractionalOctave,
  standardGrid,
  valueAtHz,
  GRID_BANDS_PER_OCTAVE,
  GRID_MIN_HZ,
  NOMINAL_THIRD_OCTAVE_HZ,
  OCTAVE_RATIO_BASE10,
  type SmoothingFraction,
} from './grid.ts'
export { generateSweep, harmonicDelayS, sweepFrequencyAt, sweepTimeAt, SWEEP_FADE_S } from './sweep.ts'
export { rfft, irfft, nextPowerOfTwo, releaseTransformCaches } from './fft.ts'
export type * from './types.ts'
