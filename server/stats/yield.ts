/**
 * Yield and the failure Pareto of a set of units, for the lot report and the dashboard.
 *
 * Pure: the caller loads each unit's production results in time order and leaves out return tests
 * (a return test never counts in production yield; see the glossary). Every ratio is a fraction
 * between 0 and 1 (multiply by 100 for a percentage), or null when its denominator is 0.
 *
 * Definitions (first-pass yield and final yield are trade terms; the exact treatment of unjudged
 * results and of retests is ours and is stated here once):
 * - a result's verdict is `pass` or `fail` (decisive), `retest` (the recording could not decide:
 *   measure again; never a fail) or none (unjudged: no mask was released when it was tested);
 * - units tested: units with at least one production result, judged or not;
 * - units judged: units with at least one decisive result (their verdict is the latest of them);
 * - units awaiting a retest: units with a retest but no decisive result yet (their verdict shows
 *   `retest`); outside the final yield until a decisive result comes;
 * - units never judged: units tested whose every result is unjudged (verdict null: no mask was
 *   released when they were tested, and none has judged them since);
 * - first-pass yield: units whose FIRST result passed / units whose first result is judged. A first
 *   result that ended `retest` counts in the denominator and never in the numerator: a unit that
 *   needed a retest is not a first pass (its reason is counted apart, `firstRetestUnits`). A unit
 *   whose first result is unjudged is left out of both numerator and denominator (counted in
 *   `firstResultUnjudged`): whether it would have passed first time is unknown, and taking its next
 *   judged result instead would credit a second test as a first pass. When a mask later judges that
 *   first result (a null verdict may be set once), the unit joins the figure;
 * - final yield: units whose LATEST DECISIVE result passed / units judged (retests and unjudged
 *   results after it do not change the unit's standing);
 * - retest rate: units with more than one production result (judged or not) / units tested.
 */

import { isDecisive, RETEST_REASONS, type RetestReason, type Verdict } from '../../shared/utils/verdict.ts'

/** One production result of a unit, as the yield needs it. */
export interface ProductionResult {
  /** null: not judged (no released mask yet). */
  verdict: Verdict | null
  /** Names of the checks that failed (the result's check names, e.g. `fsHz`, `polarity`); empty when it passed. */
  failedChecks: readonly string[]
  /** Why a `retest` result could not decide (absent or null for any other verdict). */
  retestReason?: RetestReason | null
}

/** One unit's production results, oldest first, return tests already excluded by the caller. */
export interface UnitHistory {
  serial: string
  tests: readonly ProductionResult[]
}

export interface YieldSummary {
  unitsTested: number
  /** Units with a decisive (pass or fail) result: the final yield's denominator. */
  unitsJudged: number
  /** Units with a retest and no decisive result yet. */
  unitsAwaitingRetest: number
  unitsNeverJudged: number
  /** Units whose first result is judged: the first-pass yield's denominator. */
  firstResultJudged: number
  /** Units whose first result is unjudged: outside the first-pass yield (see the module notes). */
  firstResultUnjudged: number
  /** Units whose first result passed: the first-pass yield's numerator. */
  firstPassUnits: number
  /** Units whose first result ended `retest`: in the first-pass yield's denominator, never a pass, never a fail. */
  firstRetestUnits: number
  firstPassYield: number | null
  /** Units whose latest decisive result passed: the final yield's numerator (denominator: unitsJudged). */
  finalPassUnits: number
  finalYield: number | null
  /** Units with more than one production result. */
  retestedUnits: number
  retestRate: number | null
}

function ratio(num: number, den: number): number | null {
  return den === 0 ? null : num / den
}

function firstJudged(tests: readonly ProductionResult[]): ProductionResult | undefined {
  return tests.find((t) => t.verdict !== null)
}

function lastDecisive(tests: readonly ProductionResult[]): ProductionResult | undefined {
  for (let i = tests.length - 1; i >= 0; i--) if (isDecisive(tests[i]!.verdict)) return tests[i]
  return undefined
}

/** The result a unit stands by: its latest decisive result, else (only retests so far) its latest retest. */
function standing(tests: readonly ProductionResult[]): ProductionResult | undefined {
  const last = lastDecisive(tests)
  if (last) return last
  for (let i = tests.length - 1; i >= 0; i--) if (tests[i]!.verdict === 'retest') return tests[i]
  return undefined
}

/**
 * Yield figures of a set of units (see the module notes for each definition). Units with no
 * result at all are ignored: they were not tested.
 */
export function computeYield(units: readonly UnitHistory[]): YieldSummary {
  let unitsTested = 0
  let unitsJudged = 0
  let unitsAwaitingRetest = 0
  let firstResultJudged = 0
  let firstPassUnits = 0
  let firstRetestUnits = 0
  let finalPassUnits = 0
  let retestedUnits = 0
  for (const u of units) {
    if (u.tests.length === 0) continue
    unitsTested++
    if (u.tests.length > 1) retestedUnits++
    const first = u.tests[0]!
    if (first.verdict !== null) {
      firstResultJudged++
      if (first.verdict === 'pass') firstPassUnits++
      if (first.verdict === 'retest') firstRetestUnits++
    }
    const last = lastDecisive(u.tests)
    if (last) {
      unitsJudged++
      if (last.verdict === 'pass') finalPassUnits++
    } else if (u.tests.some((t) => t.verdict === 'retest')) unitsAwaitingRetest++
  }
  return {
    unitsTested,
    unitsJudged,
    unitsAwaitingRetest,
    unitsNeverJudged: unitsTested - unitsJudged - unitsAwaitingRetest,
    firstResultJudged,
    firstResultUnjudged: unitsTested - firstResultJudged,
    firstPassUnits,
    firstRetestUnits,
    firstPassYield: ratio(firstPassUnits, firstResultJudged),
    finalPassUnits,
    finalYield: ratio(finalPassUnits, unitsJudged),
    retestedUnits,
    retestRate: ratio(retestedUnits, unitsTested),
  }
}

/**
 * Which results of a unit the Pareto reads:
 * - `first`: the unit's first result, when judged (why units fail first time: the first-pass yield's
 *   loss, so "any" plus "any retest" equals firstResultJudged − firstPassUnits);
 * - `final`: the result the unit stands by: its latest decisive result, else its latest retest (why
 *   units are still failing, or still waiting to be measured again);
 * - `ever`: every judged result (a unit that failed a check on any test counts once under it, and
 *   once under each retest reason it met).
 * Retests are counted apart from failing checks: a retest is not a failure of the unit.
 */
export type ParetoBasis = 'first' | 'final' | 'ever'

/** Bucket for a failed result that names no check, so that no failure disappears from the chart. */
export const UNNAMED_CHECK = 'unnamed'

export interface ParetoRow {
  check: string
  /** Units that failed this check (each unit once). */
  units: number
  /** units / the sum of units over all rows: the bar's share of all check failures. */
  fraction: number
  /** Running sum of `fraction` down the sorted rows; 1 at the last row. */
  cumulativeFraction: number
  /** units / the units the basis reads (see ParetoResult.unitsConsidered). */
  unitFraction: number
}

/** Units whose results (as the basis reads them) ended `retest` for one reason. */
export interface RetestRow {
  reason: RetestReason
  units: number
  /** units / the units the basis reads. */
  unitFraction: number
}

export interface ParetoResult {
  basis: ParetoBasis
  /** Units whose results the basis reads: first result judged (`first`) or judged at all (`final`, `ever`), retests included. */
  unitsConsidered: number
  /** Units failing at least one check (counted once, however many checks they failed). */
  any: { units: number; unitFraction: number | null }
  /** Sorted by units, most first; ties by check name, for a stable order. */
  rows: ParetoRow[]
  /** Units with a retest (counted once, whatever its reasons): apart from the failures above. */
  anyRetest: { units: number; unitFraction: number | null }
  /** Per retest reason, sorted like the rows (ties in RETEST_REASONS' order, most urgent first). */
  retests: RetestRow[]
}

function testsFor(u: UnitHistory, basis: ParetoBasis): ProductionResult[] | null {
  if (basis === 'first') {
    const first = u.tests[0]
    return first && first.verdict !== null ? [first] : null
  }
  if (basis === 'final') {
    const last = standing(u.tests)
    return last ? [last] : null
  }
  return firstJudged(u.tests) ? u.tests.filter((t) => t.verdict !== null) : null
}

/**
 * The failure Pareto by check: a unit failing several checks counts once under each of them, and
 * once under "any" (the "any" row is kept apart from the bars and from the cumulative line, which
 * is the usual Pareto chart of defect categories: Juran; NIST/SEMATECH e-Handbook 6.1 lists the
 * Pareto chart among the quality tools, from memory).
 */
export function failurePareto(units: readonly UnitHistory[], basis: ParetoBasis = 'first'): ParetoResult {
  const counts = new Map<string, number>()
  const retestCounts = new Map<RetestReason, number>()
  let considered = 0
  let anyUnits = 0
  let anyRetestUnits = 0
  for (const u of units) {
    const tests = testsFor(u, basis)
    if (!tests) continue
    considered++
    const failed = new Set<string>()
    const reasons = new Set<RetestReason>()
    let unitFailed = false
    for (const t of tests) {
      if (t.verdict === 'retest') reasons.add(t.retestReason ?? 'undecided')
      if (t.verdict !== 'fail') continue
      unitFailed = true
      if (t.failedChecks.length === 0) failed.add(UNNAMED_CHECK)
      for (const c of t.failedChecks) failed.add(c)
    }
    if (unitFailed) anyUnits++
    if (reasons.size) anyRetestUnits++
    for (const c of failed) counts.set(c, (counts.get(c) ?? 0) + 1)
    for (const r of reasons) retestCounts.set(r, (retestCounts.get(r) ?? 0) + 1)
  }
  const retests = RETEST_REASONS.filter((r) => retestCounts.has(r))
    .map((reason): RetestRow => ({ reason, units: retestCounts.get(reason)!, unitFraction: retestCounts.get(reason)! / considered }))
    .sort((a, b) => b.units - a.units || RETEST_REASONS.indexOf(a.reason) - RETEST_REASONS.indexOf(b.reason))
  const sorted = [...counts.entries()].sort((a, b) => b[1] - a[1] || (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0))
  const total = sorted.reduce((s, [, n]) => s + n, 0)
  let running = 0
  const rows = sorted.map(([check, n]): ParetoRow => {
    running += n
    // Integer running count over the integer total: the last row is exactly 1, with no drift from adding fractions.
    return { check, units: n, fraction: n / total, cumulativeFraction: running / total, unitFraction: n / considered }
  })
  return {
    basis,
    unitsConsidered: considered,
    any: { units: anyUnits, unitFraction: ratio(anyUnits, considered) },
    rows,
    anyRetest: { units: anyRetestUnits, unitFraction: ratio(anyRetestUnits, considered) },
    retests,
  }
}
