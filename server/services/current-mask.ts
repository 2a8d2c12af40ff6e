import type { Knex } from 'knex'
import type { UnitView } from '../../shared/types/units.ts'
import type { MaskLimits } from '../../shared/utils/mask.ts'
import { getActiveMask } from '../repos/masks.ts'
import { listProductResults } from '../repos/results.ts'
import { failedCheckNames, judge, type Judgeable } from '../verdict/judge.ts'

/** What the product's current mask says of each of a unit's results (the unit page's second column). */
export type CurrentMaskOpinion = NonNullable<UnitView['currentMask']>

/**
 * What a mask says of results that are already stored. Pure: a result's stored verdict is history
 * (the mask that judged it when it was measured) and stays as it is; this opinion is only shown
 * beside it, so a person sees which old results the mask released since would judge differently.
 */
export function maskOpinion(
  mask: { version: number; limits: MaskLimits },
  ratedImpedanceOhm: number,
  results: (Judgeable & { recordingId: number })[],
): CurrentMaskOpinion {
  return {
    version: mask.version,
    results: results.map((r) => {
      const j = judge(r, mask.limits, ratedImpedanceOhm)
      return { recordingId: r.recordingId, verdict: j.verdict, failedChecks: failedCheckNames(j) }
    }),
  }
}

/**
 * Re-judges the given recordings' stored results (return tests included) with the product's
 * current released mask, for display only: nothing is written. Null when the product has no
 * released mask. Read without the product lock: a mask released meanwhile shows on the next read.
 */
export async function currentMaskOpinion(
  db: Knex,
  product: { id: number; ratedImpedanceOhm: number },
  recordingIds: number[],
): Promise<CurrentMaskOpinion | null> {
  const active = await getActiveMask(db, product.id)
  if (!active) return null
  const stored = await listProductResults(db, product.id, { recordingIds, anyPurpose: true })
  return maskOpinion(active, product.ratedImpedanceOhm, stored)
}
