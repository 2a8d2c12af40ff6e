/** Response types of the quality pages (lots, lot report, dashboard, likely causes, alerts). */

import type { RetestReason } from '../utils/verdict'

export type ReportFigure = 'fsHz' | 're20Ohm' | 'qts' | 'sensitivityDb' | 'thdMaxPct'

export interface LotSummary {
  code: string
  productCode: string
  productName: string
  createdAt: string
  closedAt: string | null
  unitsTested: number
  /** Fractions 0–1, null when nothing to divide by. */
  firstPassYield: number | null
  finalYield: number | null
  lastTestAt: string | null
}

export interface FigureDistribution {
  figure: ReportFigure
  label: string
  unit: string
  n: number
  mean: number | null
  sd: number | null
  /** Limits of the product's active mask (null: open). */
  lsl: number | null
  usl: number | null
  cp: number | null
  cpk: number | null
  histogram: { edges: number[]; counts: number[] }
}

export interface ControlChartView {
  figure: 'fsHz' | 're20Ohm'
  label: string
  unit: string
  /** Production order: each unit's first production result. */
  points: { serial: string; at: string; value: number }[]
  centre: number
  ucl: number
  lcl: number
  sigma: number
  mrBar: number
  mrUcl: number
  baseline: 'golden' | 'first_in_control'
  signals: { index: number; serial: string; rule: string; side: 'above' | 'below' }[]
  /** Plain-language warnings, one per rule that fired. */
  warnings: string[]
}

export interface ParetoRowView {
  check: string
  label: string
  units: number
  fraction: number
  cumulativeFraction: number
  /** units / the units the basis reads (pareto.unitsConsidered). */
  unitFraction: number
  /** Trade knowledge (editable by engineers), for the failure classes under this check. */
  likelyCauses: { failureClass: string; causes: string[] }[]
}

/** Units whose first result (the Pareto's basis) ended `retest` for one reason. */
export interface RetestRowView {
  reason: RetestReason
  /** The reason in the technician's words (RETEST_ADVICE label). */
  label: string
  units: number
  /** units / pareto.unitsConsidered. */
  unitFraction: number
}

/** A unit that needs review: retests in a row since its latest decisive result, at least the product's limit. */
export interface NeedsReviewUnit {
  serial: string
  retests: number
  /** One reason per retest, newest first. */
  reasons: RetestReason[]
  lastTestAt: string
  latestRecordingId: number
}

export interface LotReport {
  lot: { code: string; productCode: string; productName: string; createdAt: string; closedAt: string | null }
  maskVersion: number | null
  summary: {
    unitsTested: number
    /** Units with a decisive (pass or fail) result. */
    unitsJudged: number
    /** Units with a retest and no decisive result yet. */
    unitsAwaitingRetest: number
    unitsNeverJudged: number
    firstPassYield: number | null
    finalYield: number | null
    retestRate: number | null
    /** Numerators: units whose first result passed, whose latest judged result passed, tested more than once. */
    firstPassUnits: number
    finalPassUnits: number
    retestedUnits: number
    /** Units whose first result ended `retest`: not a first pass, not a fail (see pareto.retests for the reasons). */
    firstRetestUnits: number
    /** Units with a result decided within its uncertainty of a limit (a check marked marginal). */
    marginalUnits: number
    /** Returns from the field of the lot's units; returnRate = returnedUnits / unitsTested (return tests never count in the yields above). */
    returns: number
    returnedUnits: number
    returnRate: number | null
  }
  /**
   * basis `first`: each unit's first result (the first-pass yield's loss); unitsConsidered: units
   * whose first result is judged. Retests are counted apart from failing checks: `anyRetest` and
   * `retests` (per reason), never among the rows.
   */
  pareto: {
    basis: 'first' | 'final' | 'ever'
    unitsConsidered: number
    any: { units: number; fraction: number | null }
    rows: ParetoRowView[]
    anyRetest: { units: number; fraction: number | null }
    retests: RetestRowView[]
  }
  /** Units whose latest results are retests, at least the product's retest limit in a row: for the engineers. */
  needsReview: { retestLimit: number; units: NeedsReviewUnit[] }
  distributions: FigureDistribution[]
  drift: ControlChartView[]
  /** Why a drift chart is missing (too few units for control limits). */
  driftNotes: string[]
  /** Says the likely causes are trade knowledge, not a diagnosis. */
  causesNote: string
  generatedAt: string
}

/** One failure class (a check, with a direction for two-sided figures: "fsHz:high") and its likely causes. */
export interface LikelyCause {
  failureClass: string
  label: string
  causes: string[]
  updatedAt: string
  updatedBy: string | null
}

export interface AlertView {
  id: number
  productCode: string
  lotCode: string | null
  kind: 'low_yield' | 'drift'
  message: string
  openedAt: string
  closedAt: string | null
  mailedAt: string | null
}

export interface DashboardView {
  date: string
  byLineProduct: { line: string; productCode: string; unitsTested: number; passed: number; failed: number; yield: number | null }[]
  openLots: LotSummary[]
  alerts: AlertView[]
  /** Products with returns from the field: returned units / units tested, all time. */
  returnsByProduct: { productCode: string; unitsTested: number; returns: number; returnedUnits: number; returnRate: number | null }[]
}
