import type { Knex } from 'knex'
import {
  analysisFramesOf,
  analysisMemoryBytes,
  analyzeImpedanceTable,
  analyzeRecording,
  AnalysisInputError,
  checkProfile,
  parseImpedanceTable,
  readWavLayout,
  releaseTransformCaches,
  validateRecordingSource,
  type AnalysisResult,
  type AnalyzeOptions,
  type StationProfile,
} from '../analysis/index.ts'
import { getActiveMask } from '../repos/masks.ts'
import { getRecording, markFinishedWithError } from '../repos/recordings.ts'
import { saveResult } from '../repos/results.ts'
import { recordStationCheck } from './station-checks.ts'
import { getProfileVersion } from '../repos/stations.ts'
import { getProductById } from '../repos/products.ts'
import { getUnitById } from '../repos/units.ts'
import type { RecordingStorage } from '../storage/recordings.ts'
import { claimAttempt, MAX_ATTEMPTS } from '../queue/retries.ts'
import { Capacity, positiveIntFromEnv } from '../utils/capacity.ts'
import { judge, onlyUndecided } from '../verdict/judge.ts'
import { requiredTableBand, tableCoverageProblem } from '../verdict/table-coverage.ts'
import { CHECK_LABELS, type MaskLimits } from '../../shared/utils/mask.ts'
import type { ProductView } from '../../shared/types/api.ts'

export type ProcessOutcome = 'done' | 'rejected' | 'skipped'

/**
 * Memory the analyses of one worker process may hold at once (CONETRAIL_WORKER_MEMORY_MB, default
 * 256 MB), by the engine's estimate of each recording's peak (analysisMemoryBytes). A recording
 * waits until its share fits; one larger than the whole budget runs alone. A usual recording
 * (48 kHz, 1.35 s, 3 channels) needs about 13 MB; the longest the analysis reads
 * (MAX_ANALYSIS_FRAMES, 2^20 frames) about 210 MB, so it runs alone and a worker stays under 400 MB.
 */
export const DEFAULT_WORKER_MEMORY_MB = 256
/** Transforms up to this length keep their plans between recordings (a usual recording's are 65 536 long; longer ones hold tens of MB each). */
const KEPT_TRANSFORM_LENGTH = 1 << 18

let analysisMemory: Capacity | undefined

function workerMemory(): Capacity {
  analysisMemory ??= new Capacity(positiveIntFromEnv(process.env.CONETRAIL_WORKER_MEMORY_MB, DEFAULT_WORKER_MEMORY_MB) * 1024 * 1024)
  return analysisMemory
}

/**
 * Reads a stored sweep recording block by block into its decoded channels, within the worker's
 * memory budget, and analyses it: the file's bytes are never held whole, let alone beside the
 * decoded channels.
 */
async function analyzeStoredSweep(storage: RecordingStorage, key: string, profileIn: StationProfile, options: AnalyzeOptions): Promise<AnalysisResult> {
  const profile = checkProfile(profileIn)
  const file = await storage.open(key)
  let release = () => {}
  try {
    const layout = await readWavLayout(file)
    release = await workerMemory().take(analysisMemoryBytes(analysisFramesOf(layout, profile), layout.channels))
    const decoded = await validateRecordingSource(file, profile, { layout, keepChannels: true })
    return analyzeRecording(decoded, profile, options)
  } finally {
    await file.close()
    release()
    releaseTransformCaches(KEPT_TRANSFORM_LENGTH)
  }
}

/**
 * Analyses one stored recording and saves its result, judged by the product's released mask when
 * there is one: the engine measures, the judge decides, the results repo only stores. Idempotent: a
 * recording already finished is skipped, and a save repeated after a crash keeps the first result.
 * Input the engine refuses ends `rejected` (retrying cannot help); other errors are thrown so the
 * queue retries them.
 */
export async function processRecording(db: Knex, storage: RecordingStorage, recordingId: number, maxAttempts = MAX_ATTEMPTS): Promise<ProcessOutcome> {
  if (!(await claimAttempt(db, recordingId, maxAttempts))) return 'skipped'
  const rec = (await getRecording(db, recordingId))!
  const unit = (await getUnitById(db, Number(rec.unit_id)))!
  const product = (await getProductById(db, Number(unit.product_id)))!
  const text = rec.kind === 'sweep' ? null : (await storage.read(rec.storage_key)).toString('utf8')
  let analysis: AnalysisResult
  try {
    const ambientC = rec.ambient_c ?? undefined
    if (rec.kind === 'sweep') {
      const profile = rec.station_profile_id ? await getProfileVersion(db, Number(rec.station_profile_id)) : undefined
      if (!profile) throw new AnalysisInputError('invalid_profile', 'The recording has no station profile to read it with')
      analysis = await analyzeStoredSweep(storage, rec.storage_key, profile, { ambientC, sensitivityBandHz: product.sensitivityBandHz })
    } else {
      analysis = analyzeImpedanceTable(text!, { ambientC })
    }
  } catch (err) {
    if (err instanceof AnalysisInputError) {
      await markFinishedWithError(db, recordingId, 'rejected', err.code, err.message)
      return 'rejected'
    }
    throw err
  }
  // Decide, then store, in one transaction holding the product row's share lock: a mask release
  // (which locks that row for update) either committed before and judges here, or waits for this
  // commit and then finds the result unjudged. A result can never miss the mask either way.
  // A table that could not measure what a table should is refused (export it again), never stored
  // as a pass; a sweep that could not decide is stored as a retest (measure again); one that shows
  // a unit fault or a failed check is stored as a fail.
  return db.transaction(async (trx) => {
    const mask = await getActiveMask(trx, product.id, { lockProduct: true })
    const refusal = rec.kind === 'impedance_table' ? tableRefusal(text!, product, mask?.limits ?? null) : null
    const verdict = refusal ? null : mask ? { maskId: mask.id, ...judge(analysis, mask.limits, product.ratedImpedanceOhm) } : null
    if (refusal || (verdict && rec.kind === 'impedance_table' && onlyUndecided(verdict))) {
      const err = refusal ?? notMeasured(verdict!.undecided)
      await markFinishedWithError(trx, recordingId, 'rejected', err.code, err.message)
      return 'rejected'
    }
    await saveResult(trx, { recordingId, unitId: Number(rec.unit_id), analysis }, verdict)
    if (rec.purpose === 'station_check') {
      await recordStationCheck(trx, { id: recordingId, unitId: Number(rec.unit_id), stationId: rec.station_id === null ? null : Number(rec.station_id), productId: product.id, uploadedAt: rec.uploaded_at }, analysis)
    }
    return 'done'
  })
}

/** The refusal of a table that does not cover the product's band (see requiredTableBand), or null. */
export function tableRefusal(text: string, product: Pick<ProductView, 'sensitivityBandHz'>, limits: MaskLimits | null): AnalysisInputError | null {
  const { freqHz } = parseImpedanceTable(text)
  const problem = tableCoverageProblem([freqHz[0]!, freqHz[freqHz.length - 1]!], requiredTableBand(product, limits))
  return problem ? new AnalysisInputError('table_band_too_narrow', problem) : null
}

function notMeasured(checks: string[]): AnalysisInputError {
  const names = checks.map((c) => CHECK_LABELS[c]?.label ?? c).join(', ')
  return new AnalysisInputError('not_measured', `This recording could not measure ${names}, and no measured check failed: measure the unit again.`)
}
