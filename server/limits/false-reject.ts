/**
 * The false-reject share a mask's limits are expected to give on good units, estimated from its
 * golden units alone (normal model): for each scalar limit the predictive Student-t share outside
 * it (server/stats/tolerance.ts predictedOutsideShare); for a curve the largest share of any of its
 * points (the points of one curve move together, so this is a lower bound that a curve whose points
 * were independent would exceed); overall 1 − Π(1 − shareᵢ), the checks taken as independent.
 *
 * It works on any limits, the proposed ones or the engineer's edits, so the mask page and the
 * release read the same figure.
 */
import { summarize } from '../stats/summary.ts'
import { combinedShare, predictedOutsideShare } from '../stats/tolerance.ts'
import { SCALAR_LIMIT_NAMES, figureValue, limitAtHz, type MaskLimits } from '../../shared/utils/mask.ts'
import type { FalseRejectEstimate } from '../../shared/types/api.ts'
import type { GoldenResult } from './propose.ts'

/** Below this many golden values a figure's share is not estimated. */
const MIN_VALUES = 3

/** The largest predicted share outside a curve's band over its points; null without golden curves. */
function curveShare(golden: readonly GoldenResult[], name: 'splDb' | 'impedanceOhm', limit: NonNullable<MaskLimits['curves']['splDb']>): number | null {
  const withCurve = golden.filter((g) => g.curves[name])
  if (withCurve.length < MIN_VALUES) return null
  const grid = withCurve[0]!.curves.freqHz
  let worst: number | null = null
  grid.forEach((f, i) => {
    const lo = limitAtHz(limit.freqHz, limit.low, f)
    const hi = limitAtHz(limit.freqHz, limit.high, f)
    if (lo === null && hi === null) return
    const s = summarize(withCurve.map((g) => (g.curves.freqHz[i] === f ? g.curves[name]![i] : null)))
    if (!s || s.n < MIN_VALUES) return
    const share = predictedOutsideShare(s.mean, s.sd, s.n, lo, hi)
    if (worst === null || share > worst) worst = share
  })
  return worst
}

/** Estimated false-reject shares (0–1) per limited check and overall, from the golden units. */
export function estimateFalseRejects(golden: readonly GoldenResult[], limits: MaskLimits): FalseRejectEstimate {
  const byCheck: FalseRejectEstimate['byCheck'] = {}
  for (const name of SCALAR_LIMIT_NAMES) {
    const lim = limits.scalars[name]
    if (!lim) continue
    const s = summarize(golden.map((g) => figureValue(g, name, limits.thdBandHz)))
    if (s && s.n >= MIN_VALUES) byCheck[name] = predictedOutsideShare(s.mean, s.sd, s.n, lim.low, lim.high)
  }
  for (const name of ['splDb', 'impedanceOhm'] as const) {
    const lim = limits.curves[name]
    const share = lim ? curveShare(golden, name, lim) : null
    if (share !== null) byCheck[name] = share
  }
  return { byCheck, overall: combinedShare(Object.values(byCheck).filter((v): v is number => v !== undefined)) }
}
