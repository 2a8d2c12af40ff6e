import type { Knex } from 'knex'
import type { ControlChartView, FigureDistribution, LikelyCause, LotReport, ParetoRowView, ReportFigure } from '../../shared/types/reports.ts'
import { CHECK_LABELS, type MaskLimits } from '../../shared/utils/mask.ts'
import { listCauses } from '../repos/causes.ts'
import { getLotByCode, listGoldenFigures, listLotResults, listNeedsReview, type LotResultRow, type LotRow } from '../repos/lots.ts'
import { getProductById } from '../repos/products.ts'
import { getActiveMask } from '../repos/masks.ts'
import { countLotReturns, countReturnsPerUnit } from '../repos/returns.ts'
import {
  StatsError,
  capability,
  computeYield,
  describeSignal,
  failurePareto,
  histogram,
  imrChart,
  type ImrChart,
  type RuleSignal,
  type UnitHistory,
} from '../stats/index.ts'
import { RETEST_ADVICE, type RetestReason, type Verdict } from '../../shared/utils/verdict.ts'

/** Golden units a mask needs before its golden values set the control limits (fewer: the lot's own first in-control stretch). Our choice. */
export const MIN_GOLDEN_FOR_BASELINE = 5

export const REPORT_FIGURES: readonly ReportFigure[] = ['fsHz', 're20Ohm', 'qts', 'sensitivityDb', 'thdMaxPct']
const DRIFT_FIGURES = ['fsHz', 're20Ohm'] as const

/** A unit of the lot and its production results, oldest first. */
interface UnitResults {
  unitId: number
  serial: string
  results: LotResultRow[]
}

/** Units in production order: the order of each unit's first production result. */
function groupByUnit(rows: readonly LotResultRow[]): UnitResults[] {
  const byId = new Map<number, UnitResults>()
  for (const r of rows) {
    let u = byId.get(r.unitId)
    if (!u) byId.set(r.unitId, (u = { unitId: r.unitId, serial: r.serial, results: [] }))
    u.results.push(r)
  }
  return [...byId.values()]
}

/** The value a figure reads for a result: Re at 20 °C, or the raw Re when no ambient was given (as the judge reads it). */
function figureOf(r: LotResultRow, f: ReportFigure): number | null {
  switch (f) {
    case 'fsHz':
      return r.fsHz
    case 're20Ohm':
      return r.re20Ohm ?? r.reOhm
    case 'qts':
      return r.qts
    case 'sensitivityDb':
      return r.sensitivityDb
    case 'thdMaxPct':
      return r.thdMaxPct
  }
}

const failedChecks = (r: LotResultRow) => r.failedChecks.map((c) => c.name)

function histories(units: readonly UnitResults[]): UnitHistory[] {
  return units.map((u) => ({ serial: u.serial, tests: u.results.map((r) => ({ verdict: r.verdict, failedChecks: failedChecks(r), retestReason: r.retestReason })) }))
}

/**
 * The result whose figures stand for the unit in distributions and drift: its first that did not
 * end `retest` (a retest's recording was disturbed, so its figures are not the unit's); undefined
 * when all its results so far are retests.
 */
function figuresResult(u: UnitResults): LotResultRow | undefined {
  return u.results.find((r) => r.verdict !== 'retest')
}

/** The failure class of a failed check: the check name, with the side for a figure with limits (`fsHz:high`). */
export function failureClassOf(c: LotResultRow['failedChecks'][number]): string {
  if (c.value !== null && c.high !== null && c.value > c.high) return `${c.name}:high`
  if (c.value !== null && c.low !== null && c.value < c.low) return `${c.name}:low`
  return c.name
}

function causesFor(check: string, seen: ReadonlySet<string>, causes: readonly LikelyCause[]): ParetoRowView['likelyCauses'] {
  const ofCheck = causes.filter((c) => c.failureClass === check || c.failureClass.startsWith(`${check}:`))
  const observed = ofCheck.filter((c) => seen.has(c.failureClass))
  return (observed.length ? observed : ofCheck).map((c) => ({ failureClass: c.failureClass, causes: c.causes }))
}

function pareto(units: readonly UnitResults[], causes: readonly LikelyCause[]): LotReport['pareto'] {
  const p = failurePareto(histories(units), 'first')
  // The failure classes seen on the same basis (first results), to show the causes of the side that failed.
  const seen = new Set<string>()
  for (const u of units) for (const c of u.results[0]!.failedChecks) seen.add(failureClassOf(c))
  return {
    basis: p.basis,
    unitsConsidered: p.unitsConsidered,
    any: { units: p.any.units, fraction: p.any.unitFraction },
    anyRetest: { units: p.anyRetest.units, fraction: p.anyRetest.unitFraction },
    retests: p.retests.map((r) => ({ reason: r.reason, label: RETEST_ADVICE[r.reason].label, units: r.units, unitFraction: r.unitFraction })),
    rows: p.rows.map((r) => ({
      check: r.check,
      label: CHECK_LABELS[r.check]?.label ?? r.check,
      units: r.units,
      fraction: r.fraction,
      cumulativeFraction: r.cumulativeFraction,
      unitFraction: r.unitFraction,
      likelyCauses: causesFor(r.check, seen, causes),
    })),
  }
}

function distribution(units: readonly UnitResults[], f: ReportFigure, limits: MaskLimits | null): FigureDistribution {
  const values = units.flatMap((u) => {
    const r = figuresResult(u)
    return r ? [figureOf(r, f)] : []
  })
  const lim = limits?.scalars[f]
  const lsl = lim?.low ?? null
  const usl = lim?.high ?? null
  let cap: ReturnType<typeof capability>
  try {
    cap = capability(values, { lsl, usl })
  } catch (err) {
    // A mask with low = high gives no capability (LSL must be below USL): show the spread without indices.
    if (!(err instanceof StatsError)) throw err
    cap = capability(values, { lsl: null, usl: null })
  }
  const h = histogram(values, { include: [lsl, usl] })
  return {
    figure: f,
    label: CHECK_LABELS[f]?.label ?? f,
    unit: CHECK_LABELS[f]?.unit ?? '',
    n: cap.n,
    mean: cap.mean,
    sd: cap.sd,
    lsl,
    usl,
    cp: cap.cp,
    cpk: cap.cpk,
    histogram: { edges: h.edges, counts: h.counts },
  }
}

/** One plain warning per rule that fired: the latest signal of that rule, with how often it fired. */
function warningsOf(signals: readonly RuleSignal[], label: { label: string; unit: string }, serials: readonly string[]): string[] {
  const latest = new Map<string, { s: RuleSignal; n: number }>()
  for (const s of signals) latest.set(s.rule, { s, n: (latest.get(s.rule)?.n ?? 0) + 1 })
  return [...latest.values()].map(({ s, n }) => describeSignal(s, label, serials) + (n > 1 ? ` (${n} signals of this kind in the lot)` : ''))
}

function drift(units: readonly UnitResults[], golden: readonly { fsHz: number | null; re20Ohm: number | null }[], notes: string[]): ControlChartView[] {
  const out: ControlChartView[] = []
  for (const f of DRIFT_FIGURES) {
    const label = { label: CHECK_LABELS[f]!.label, unit: CHECK_LABELS[f]!.unit }
    const points = units
      .flatMap((u) => {
        const r = figuresResult(u)
        return r ? [{ serial: u.serial, at: r.uploadedAt.toISOString(), value: figureOf(r, f) }] : []
      })
      .filter((p): p is { serial: string; at: string; value: number } => p.value !== null && Number.isFinite(p.value))
    const goldenValues = golden.map((g) => g[f]).filter((v): v is number => v !== null && Number.isFinite(v))
    const useGolden = goldenValues.length >= MIN_GOLDEN_FOR_BASELINE
    const values = points.map((p) => p.value)
    let chart: ImrChart | null = null
    if (useGolden) chart = imrChart(values, { baseline: goldenValues })
    else if (values.length >= 2) chart = imrChart(values)
    if (!chart) {
      notes.push(`${label.label}: no control chart yet: the lot has no in-control stretch of 20 units and the mask has fewer than ${MIN_GOLDEN_FOR_BASELINE} golden units.`)
      continue
    }
    const serials = points.map((p) => p.serial)
    out.push({
      figure: f,
      label: label.label,
      unit: label.unit,
      points,
      centre: chart.limits.centre,
      ucl: chart.limits.ucl,
      lcl: chart.limits.lcl,
      sigma: chart.limits.sigma,
      mrBar: chart.limits.mrBar,
      mrUcl: chart.limits.mrUcl,
      baseline: useGolden ? 'golden' : 'first_in_control',
      signals: chart.signals.map((s) => ({ index: s.index, serial: serials[s.index]!, rule: s.rule, side: s.side })),
      warnings: warningsOf(chart.signals, label, serials),
    })
  }
  return out
}

interface LoadedLot {
  lot: LotRow
  units: UnitResults[]
}

async function loadLot(db: Knex, lotCode: string): Promise<LoadedLot | undefined> {
  const lot = await getLotByCode(db, lotCode)
  if (!lot) return undefined
  return { lot, units: groupByUnit(await listLotResults(db, lot.id)) }
}

const lotView = (lot: LotRow): LotReport['lot'] => ({
  code: lot.code,
  productCode: lot.productCode,
  productName: lot.productName,
  createdAt: lot.createdAt.toISOString(),
  closedAt: lot.closedAt ? lot.closedAt.toISOString() : null,
})

/**
 * The lot report: yield (server/stats/yield.ts definitions) from each unit's production results in
 * time order, the failure Pareto of first results with likely causes (retest reasons apart),
 * distributions of each unit's first result that is not a retest against the active mask, I-MR
 * drift charts over production order, and the units that need review (retests in a row).
 */
export async function getLotReport(db: Knex, lotCode: string): Promise<LotReport | undefined> {
  const lot = await getLotByCode(db, lotCode)
  if (!lot) return undefined
  const [rows, mask, causes, returns, product, review] = await Promise.all([
    listLotResults(db, lot.id),
    getActiveMask(db, lot.productId),
    listCauses(db),
    countLotReturns(db, lot.id),
    getProductById(db, lot.productId),
    listNeedsReview(db, lot.id),
  ])
  const units = groupByUnit(rows)
  const golden = mask ? await listGoldenFigures(db, mask.id) : []
  const y = computeYield(histories(units))
  const driftNotes: string[] = []
  return {
    lot: lotView(lot),
    maskVersion: mask?.version ?? null,
    summary: {
      unitsTested: y.unitsTested,
      unitsJudged: y.unitsJudged,
      unitsAwaitingRetest: y.unitsAwaitingRetest,
      unitsNeverJudged: y.unitsNeverJudged,
      firstPassYield: y.firstPassYield,
      finalYield: y.finalYield,
      retestRate: y.retestRate,
      firstPassUnits: y.firstPassUnits,
      finalPassUnits: y.finalPassUnits,
      retestedUnits: y.retestedUnits,
      firstRetestUnits: y.firstRetestUnits,
      marginalUnits: units.filter((u) => u.results.some((r) => r.marginal)).length,
      returns: returns.returns,
      returnedUnits: returns.returnedUnits,
      returnRate: y.unitsTested === 0 ? null : returns.returnedUnits / y.unitsTested,
    },
    pareto: pareto(units, causes),
    needsReview: {
      retestLimit: product!.retestLimit,
      units: review.map((r) => ({ serial: r.serial, retests: r.retests, reasons: r.reasons, lastTestAt: r.lastTestAt.toISOString(), latestRecordingId: r.latestRecordingId })),
    },
    distributions: REPORT_FIGURES.map((f) => distribution(units, f, mask?.limits ?? null)),
    drift: drift(units, golden, driftNotes),
    driftNotes,
    causesNote: 'Likely causes are trade knowledge (common practice), not a diagnosis.',
    generatedAt: new Date().toISOString(),
  }
}

/** One unit of a lot as the CSV export lists it. */
export interface LotUnitRow {
  serial: string
  product: string
  lot: string
  firstTestAt: string
  lastTestAt: string
  tests: number
  firstVerdict: Verdict | null
  /** The unit's standing: its latest decisive (pass or fail) verdict; `retest` with only retests so far; null when nothing is judged. */
  finalVerdict: Verdict | null
  /** Checks the final (latest decisive, else latest) result failed. */
  failedChecks: string[]
  /** Production results that ended `retest`, and their reasons in test order. */
  retests: number
  retestReasons: RetestReason[]
  /** Figures of the latest production result that is not a retest (else the latest). */
  fsHz: number | null
  re20Ohm: number | null
  qts: number | null
  sensitivityDb: number | null
  thdMaxPct: number | null
  rubBuzzDb: number | null
  /** Returns from the field registered for this unit. */
  returns: number
}

/** Every unit of a lot in production order, one row each (CSV export); undefined for an unknown lot. */
export async function getLotUnitRows(db: Knex, lotCode: string): Promise<{ lot: LotReport['lot']; rows: LotUnitRow[] } | undefined> {
  const loaded = await loadLot(db, lotCode)
  if (!loaded) return undefined
  const returns = await countReturnsPerUnit(db, loaded.lot.id)
  const rows = loaded.units.map((u): LotUnitRow => {
    const first = u.results[0]!
    const latest = u.results[u.results.length - 1]!
    const newestFirst = [...u.results].reverse()
    const finalJudged = newestFirst.find((r) => r.verdict === 'pass' || r.verdict === 'fail') ?? newestFirst.find((r) => r.verdict === 'retest')
    const figures = newestFirst.find((r) => r.verdict !== 'retest') ?? latest
    const retests = u.results.filter((r) => r.verdict === 'retest')
    return {
      serial: u.serial,
      product: loaded.lot.productCode,
      lot: loaded.lot.code,
      firstTestAt: first.uploadedAt.toISOString(),
      lastTestAt: latest.uploadedAt.toISOString(),
      tests: u.results.length,
      firstVerdict: first.verdict,
      finalVerdict: finalJudged?.verdict ?? null,
      failedChecks: failedChecks(finalJudged ?? latest),
      retests: retests.length,
      retestReasons: retests.map((r) => r.retestReason ?? 'undecided'),
      fsHz: figures.fsHz,
      re20Ohm: figures.re20Ohm ?? figures.reOhm,
      qts: figures.qts,
      sensitivityDb: figures.sensitivityDb,
      thdMaxPct: figures.thdMaxPct,
      rubBuzzDb: figures.rubBuzzDb,
      returns: returns.get(u.serial) ?? 0,
    }
  })
  return { lot: lotView(loaded.lot), rows }
}
