import type { Knex } from 'knex'
import { analyzeImpedanceTable, analyzeRecording, AnalysisInputError, type AnalysisResult } from '../analysis/index.ts'
import { getActiveMask } from '../repos/masks.ts'
import { getRecording, markFinishedWithError } from '../repos/recordings.ts'
import { saveResult } from '../repos/results.ts'
import { getProfileVersion } from '../repos/stations.ts'
import { getProductById } from '../repos/products.ts'
import { getUnitById } from '../repos/units.ts'
import type { RecordingStorage } from '../storage/recordings.ts'
import { claimAttempt, MAX_ATTEMPTS } from '../queue/retries.ts'
import { judge } from '../verdict/judge.ts'

export type ProcessOutcome = 'done' | 'rejected' | 'skipped'

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
  const bytes = await storage.read(rec.storage_key)
  let analysis: AnalysisResult
  try {
    const ambientC = rec.ambient_c ?? undefined
    if (rec.kind === 'sweep') {
      const profile = rec.station_profile_id ? await getProfileVersion(db, Number(rec.station_profile_id)) : undefined
      if (!profile) throw new AnalysisInputError('invalid_profile', 'The recording has no station profile to read it with')
      analysis = analyzeRecording(bytes, profile, { ambientC, sensitivityBandHz: product.sensitivityBandHz })
    } else {
      analysis = analyzeImpedanceTable(bytes.toString('utf8'), { ambientC })
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
  await db.transaction(async (trx) => {
    const mask = await getActiveMask(trx, product.id, { lockProduct: true })
    const verdict = mask ? { maskId: mask.id, ...judge(analysis, mask.limits, product.ratedImpedanceOhm) } : null
    await saveResult(trx, { recordingId, unitId: Number(rec.unit_id), analysis }, verdict)
  })
  return 'done'
}
