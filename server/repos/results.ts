import type { Knex } from 'knex'
import type { AnalysisResult } from '../analysis/index.ts'
import type { CheckView } from '../../shared/types/api.ts'
import type { RetestReason, Verdict } from '../../shared/utils/verdict.ts'

export interface NewResult {
  recordingId: number
  unitId: number
  analysis: AnalysisResult
}

/**
 * A verdict as it is stored with a result: decided by the caller (the judge, in a service), never
 * here. A judge's Judgement fits this shape, so services pass it on as it is.
 */
export interface StoredJudgement {
  verdict: Verdict
  checks: CheckView[]
  unmeasured: string[]
  /** Checks the file should have measured but could not (each also a failing check without a value). */
  undecided?: string[]
  /** Why the verdict is `retest`: stored exactly with that verdict (null or absent otherwise). */
  retestReason?: RetestReason | null
  /** What the station should look at that did not change the verdict (kept in the checks JSON). */
  warnings?: string[]
}

/** The mask that judged a new result, and what it found. */
export interface VerdictToStore extends StoredJudgement {
  maskId: number
}

/** The judged part of a result's row: verdict, its retest reason, and the checks JSON (checks, unmeasured, undecided, warnings). */
function judgedColumns(j: StoredJudgement) {
  return {
    verdict: j.verdict,
    retest_reason: j.verdict === 'retest' ? (j.retestReason ?? 'undecided') : null,
    checks: JSON.stringify({ checks: j.checks, unmeasured: j.unmeasured, undecided: j.undecided ?? [], warnings: j.warnings ?? [] }),
  }
}

const CURVE_DIGITS = 5

/** float4 arrays hold about 7 digits; rounding first keeps the JSON small too. */
function compact(a: (number | null)[] | null): (number | null)[] | null {
  return a ? a.map((v) => (v === null || !Number.isFinite(v) ? null : Number(v.toPrecision(CURVE_DIGITS)))) : null
}

/**
 * Stores one analysed recording as a result, with the verdict its caller decided (null: no released
 * mask), and marks the recording done. It takes the caller's transaction, so the verdict is stored
 * under the same product lock it was decided under. Idempotent per recording: a second save keeps
 * the first result (one result per recording) and answers its id.
 */
export async function saveResult(trx: Knex.Transaction, r: NewResult, j: VerdictToStore | null): Promise<number> {
  const { analysis: a } = r
  const p = a.parameters
  const inserted = await trx('results')
    .insert({
      recording_id: r.recordingId,
      unit_id: r.unitId,
      kind: a.kind,
      mask_id: j?.maskId ?? null,
      ...(j ? judgedColumns(j) : { verdict: null, retest_reason: null, checks: null }),
      judged_at: j ? trx.fn.now() : null,
      re_ohm: p.reOhm,
      re20_ohm: p.re20Ohm,
      ambient_c: p.ambientC,
      fs_hz: p.fsHz,
      qms: p.qms,
      qes: p.qes,
      qts: p.qts,
      le_mh: p.leMh,
      zmax_ohm: p.zmaxOhm,
      zmin_ohm: p.zminOhm,
      sensitivity_db: p.sensitivityDb,
      thd_pct: p.thdPct,
      thd_max_pct: p.thdMaxPct,
      rub_buzz_db: p.rubBuzzDb,
      fit_error_pct: p.fitErrorPct,
      polarity: a.flags.polarity,
      open_coil: a.flags.openCoil,
      shorted_coil: a.flags.shortedCoil,
      flags: JSON.stringify(a.flags),
      parameters: JSON.stringify({ ...p, unmeasured: a.unmeasured, notes: a.notes, thdAt: a.thdAt }),
      classical: a.classical ? JSON.stringify(a.classical) : null,
      curve_freq_hz: compact(a.curves.freqHz),
      curve_spl_db: compact(a.curves.splDb),
      curve_spl_phase_deg: compact(a.curves.splPhaseDeg),
      curve_impedance_ohm: compact(a.curves.impedanceOhm),
      curve_impedance_phase_deg: compact(a.curves.impedancePhaseDeg),
      curve_thd_pct: compact(a.curves.thdPct),
      engine_version: a.engineVersion,
      timings_ms: JSON.stringify(a.timingsMs),
    })
    .onConflict('recording_id')
    .ignore()
    .returning('id')
  await trx('recordings').where({ id: r.recordingId }).update({ status: 'done', error_code: null, error_message: null, finished_at: trx.fn.now() })
  if (inserted.length) return Number(inserted[0].id)
  return Number((await trx('results').where({ recording_id: r.recordingId }).first('id')).id)
}

/** A stored result in the shape the judge and the mask proposal read. */
export interface StoredResult {
  resultId: number
  recordingId: number
  unitId: number
  serial: string
  kind: 'sweep' | 'impedance_table'
  verdict: Verdict | null
  uploadedAt: Date
  parameters: AnalysisResult['parameters']
  flags: AnalysisResult['flags']
  curves: { freqHz: number[]; splDb: (number | null)[] | null; impedanceOhm: (number | null)[] | null; thdPct: (number | null)[] | null }
}

const STORED_COLUMNS = [
  'res.id as result_id', 'res.recording_id', 'res.unit_id', 'u.serial', 'res.kind', 'res.verdict', 'r.uploaded_at',
  'res.parameters', 'res.flags', 'res.curve_freq_hz', 'res.curve_spl_db', 'res.curve_impedance_ohm', 'res.curve_thd_pct',
]

interface StoredRow {
  result_id: string
  recording_id: string
  unit_id: string
  serial: string
  kind: 'sweep' | 'impedance_table'
  verdict: Verdict | null
  uploaded_at: Date
  parameters: AnalysisResult['parameters']
  flags: AnalysisResult['flags']
  curve_freq_hz: number[]
  curve_spl_db: (number | null)[] | null
  curve_impedance_ohm: (number | null)[] | null
  curve_thd_pct: (number | null)[] | null
}

function toStored(r: StoredRow): StoredResult {
  return {
    resultId: Number(r.result_id),
    recordingId: Number(r.recording_id),
    unitId: Number(r.unit_id),
    serial: r.serial,
    kind: r.kind,
    verdict: r.verdict,
    uploadedAt: r.uploaded_at,
    parameters: r.parameters,
    flags: r.flags,
    curves: { freqHz: r.curve_freq_hz, splDb: r.curve_spl_db, impedanceOhm: r.curve_impedance_ohm, thdPct: r.curve_thd_pct },
  }
}

/** Results of a product, newest first: production tests only, unless every purpose (return tests, station checks) is asked for. */
export function productResultsQuery(db: Knex, productId: number, anyPurpose = false) {
  const q = db('results as res')
    .join('recordings as r', 'r.id', 'res.recording_id')
    .join('units as u', 'u.id', 'res.unit_id')
    .where({ 'u.product_id': productId })
    .select(STORED_COLUMNS)
    .orderBy('res.id', 'desc')
  return anyPurpose ? q : q.where('r.purpose', 'production')
}

export async function listProductResults(
  db: Knex,
  productId: number,
  opts: { last?: number; unjudgedOnly?: boolean; recordingIds?: number[]; anyPurpose?: boolean } = {},
): Promise<StoredResult[]> {
  const q = productResultsQuery(db, productId, opts.anyPurpose)
  if (opts.unjudgedOnly) q.whereNull('res.verdict')
  if (opts.recordingIds) q.whereIn('res.recording_id', opts.recordingIds)
  if (opts.last) q.limit(opts.last)
  return ((await q) as StoredRow[]).map(toStored)
}

/** The latest production result of each unit of a product (the candidates for golden units). */
export async function listLatestPerUnit(db: Knex, productId: number, limit: number, serials?: string[]): Promise<StoredResult[]> {
  const inner = productResultsQuery(db, productId).clearOrder().distinctOn('res.unit_id').orderBy([{ column: 'res.unit_id' }, { column: 'res.id', order: 'desc' }])
  if (serials) inner.whereIn('u.serial', serials)
  const rows = (await db.select('*').from(inner.as('latest')).orderBy('result_id', 'desc').limit(limit)) as StoredRow[]
  return rows.map(toStored)
}

/** One unit's results measured on one station, newest first, whatever they were made for. */
export async function listUnitResultsOnStation(db: Knex, productId: number, unitId: number, stationId: number, limit: number): Promise<StoredResult[]> {
  const rows = (await productResultsQuery(db, productId, true).where({ 'res.unit_id': unitId, 'r.station_id': stationId }).limit(limit)) as StoredRow[]
  return rows.map(toStored)
}

/** Writes the first verdict of a result that no mask had judged (the results guard allows exactly this). */
export async function setFirstVerdict(db: Knex, resultId: number, maskId: number, j: StoredJudgement): Promise<void> {
  await db('results')
    .where({ id: resultId })
    .whereNull('verdict')
    .update({ mask_id: maskId, ...judgedColumns(j), judged_at: db.fn.now() })
}
