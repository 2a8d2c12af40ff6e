/**
 * Station against station: each station's offset per figure, from the reference units it measured.
 * Each check gives a difference d = value − accepted (the reference unit's accepted value, from its
 * trusted station); a station's offset is the mean of its differences with a Student-t confidence
 * interval, mean ± t(1 − α/2; n − 1)·s/√n (NIST/SEMATECH e-Handbook 7.2.2.1, confidence limits for
 * the mean). No correction factors come out of this: offsets are shown so engineers act on the station.
 */
import tQuantile from '@stdlib/stats-base-dists-t-quantile'
import { summarize } from './summary.ts'
import { StatsError } from './errors.ts'

/** An offset above this share of the figure's tolerance width is warned about (the same tenth as the verification limits; common practice). */
export const OFFSET_WARN_SHARE = 0.1
export const OFFSET_CONFIDENCE = 0.95

export interface CheckDifference {
  stationId: number
  stationName: string
  figure: string
  /** Check value − the reference unit's accepted value. */
  difference: number
  /** The figure's tolerance width the reference unit's limit was sized on (null: set by the engineer). */
  toleranceWidth: number | null
}

export interface StationOffset {
  stationId: number
  stationName: string
  figure: string
  n: number
  offset: number
  sd: number
  /** Confidence interval of the offset; null from a single check. */
  ci: [number, number] | null
  /** Mean tolerance width of the checks that carry one; null when none does. */
  toleranceWidth: number | null
  /** |offset| / tolerance width. */
  shareOfTolerance: number | null
  warn: boolean
}

/** Offsets per station and figure, ordered by station name then figure. @throws StatsError `invalid_option`. */
export function stationOffsets(diffs: readonly CheckDifference[], o: { warnShare?: number; confidence?: number } = {}): StationOffset[] {
  const warnShare = o.warnShare ?? OFFSET_WARN_SHARE
  const confidence = o.confidence ?? OFFSET_CONFIDENCE
  if (!(warnShare > 0 && warnShare < 1) || !(confidence > 0 && confidence < 1)) throw new StatsError('invalid_option', 'the warning share and the confidence lie between 0 and 1')
  const groups = new Map<string, CheckDifference[]>()
  for (const d of diffs) {
    if (!Number.isFinite(d.difference)) continue
    const key = `${d.stationId}\u0000${d.figure}`
    groups.set(key, [...(groups.get(key) ?? []), d])
  }
  const out: StationOffset[] = []
  for (const group of groups.values()) {
    const s = summarize(group.map((d) => d.difference))!
    const half = s.n > 1 ? tQuantile(1 - (1 - confidence) / 2, s.n - 1) * (s.sd / Math.sqrt(s.n)) : null
    const widths = group.map((d) => d.toleranceWidth).filter((w): w is number => w !== null && w > 0)
    const toleranceWidth = widths.length ? widths.reduce((a, b) => a + b, 0) / widths.length : null
    const shareOfTolerance = toleranceWidth === null ? null : Math.abs(s.mean) / toleranceWidth
    out.push({
      stationId: group[0]!.stationId,
      stationName: group[0]!.stationName,
      figure: group[0]!.figure,
      n: s.n,
      offset: s.mean,
      sd: s.sd,
      ci: half === null ? null : [s.mean - half, s.mean + half],
      toleranceWidth,
      shareOfTolerance,
      warn: shareOfTolerance !== null && shareOfTolerance > warnShare,
    })
  }
  return out.sort((a, b) => a.stationName.localeCompare(b.stationName) || a.figure.localeCompare(b.figure))
}
