import type { Knex } from 'knex'
import type { RecordingPurpose, RecordingStatus } from '../../shared/utils/recordings.ts'
import type { CurveLimit, RecordingCurves, RecordingSummary, RecordingView } from '../../shared/types/api.ts'
import { RETEST_ADVICE, type RetestReason, type Verdict } from '../../shared/utils/verdict.ts'

export interface RecordingRow {
  id: string
  unit_id: string
  station_id: string | null
  station_profile_id: string | null
  uploaded_by: string | null
  uploaded_at: Date
  kind: 'sweep' | 'impedance_table'
  original_name: string
  byte_size: string
  sha256: string
  storage_key: string
  status: RecordingStatus
  error_code: string | null
  error_message: string | null
  attempts: number
  ambient_c: number | null
  note: string | null
  is_return_test: boolean
  purpose: RecordingPurpose
  return_id: string | null
}

export interface NewRecording {
  unitId: number
  stationId: number | null
  stationProfileId: number | null
  uploadedBy: number | null
  kind: 'sweep' | 'impedance_table'
  originalName: string
  byteSize: number
  sha256: string
  storageKey: string
  ambientC: number | null
  note: string | null
  /** A return test (glossary) of this return: never counts in production yield. Set once, at insert. */
  returnId?: number | null
  /** A station check: a reference unit measured again (never counts in production either). */
  stationCheck?: boolean
  /** When it was uploaded, for a demo or an import of past recordings (default: now). */
  uploadedAt?: Date
}

export async function insertRecording(db: Knex, r: NewRecording): Promise<number> {
  const [row] = await db('recordings')
    .insert({
      unit_id: r.unitId,
      station_id: r.stationId,
      station_profile_id: r.stationProfileId,
      uploaded_by: r.uploadedBy,
      kind: r.kind,
      original_name: r.originalName,
      byte_size: r.byteSize,
      sha256: r.sha256,
      storage_key: r.storageKey,
      ambient_c: r.ambientC,
      note: r.note,
      ...(r.returnId ? { return_id: r.returnId, is_return_test: true, purpose: 'return_test' } : {}),
      ...(r.stationCheck && !r.returnId ? { purpose: 'station_check' } : {}),
      ...(r.uploadedAt ? { uploaded_at: r.uploadedAt } : {}),
    })
    .returning('id')
  return Number(row.id)
}

export async function findRecordingByContent(db: Knex, unitId: number, sha256: string): Promise<RecordingRow | undefined> {
  return db<RecordingRow>('recordings').where({ unit_id: String(unitId), sha256 }).first()
}

export async function getRecording(db: Knex, id: number): Promise<RecordingRow | undefined> {
  return db<RecordingRow>('recordings').where({ id: String(id) }).first()
}

/** The same bytes already uploaded for another unit (a station sending a stale file for a new serial). */
export async function findRecordingOfOtherUnit(db: Knex, unitId: number, sha256: string): Promise<{ serial: string } | undefined> {
  return db('recordings as r').join('units as u', 'u.id', 'r.unit_id').where('r.sha256', sha256).whereNot('r.unit_id', unitId).first('u.serial')
}

/**
 * Claims a recording for analysis and counts the attempt. Returns false when it is already
 * finished, or when its attempts are used up (it is then marked failed).
 */
export async function markInAnalysis(db: Knex, id: number, maxAttempts: number): Promise<boolean> {
  const n = await db('recordings')
    .where({ id })
    .whereIn('status', ['queued', 'analysing', 'failed'])
    .where('attempts', '<', maxAttempts)
    .update({ status: 'analysing', attempts: db.raw('attempts + 1') })
  if (n > 0) return true
  await db('recordings')
    .where({ id })
    .whereIn('status', ['queued', 'analysing'])
    .update({ status: 'failed', error_code: 'analysis_failed', error_message: `Analysis stopped ${maxAttempts} times (the worker ended during it); not tried again`, finished_at: db.fn.now() })
  return false
}

/**
 * Marks failed the recordings still waiting whose job is gone (a worker died during the last
 * retry, so the queue gave up without telling anyone). Returns how many it marked.
 */
export async function failOrphanedRecordings(db: Knex, queue: string): Promise<number> {
  return db('recordings as r')
    .whereIn('r.status', ['queued', 'analysing'])
    .where('r.uploaded_at', '<', db.raw("now() - interval '1 minute'"))
    .whereNotExists(
      db('pgboss.job as j')
        .where('j.name', queue)
        .whereIn('j.state', ['created', 'retry', 'active'])
        .whereRaw("(j.data->>'recordingId')::bigint = r.id"),
    )
    .update({ status: 'failed', error_code: 'analysis_failed', error_message: 'The analysis stopped and its retries are used up', finished_at: db.fn.now() })
}

export async function markFinishedWithError(db: Knex, id: number, status: 'rejected' | 'failed', code: string, message: string): Promise<void> {
  await db('recordings').where({ id }).whereNot({ status: 'done' }).update({ status, error_code: code, error_message: message.slice(0, 2000), finished_at: db.fn.now() })
}

function viewQuery(db: Knex) {
  return db('recordings as r')
    .join('units as u', 'u.id', 'r.unit_id')
    .join('products as p', 'p.id', 'u.product_id')
    .leftJoin('lots as l', 'l.id', 'u.lot_id')
    .leftJoin('stations as s', 's.id', 'r.station_id')
    .leftJoin('results as res', 'res.recording_id', 'r.id')
    .leftJoin('masks as m', 'm.id', 'res.mask_id')
}

const SUMMARY_COLUMNS = [
  'r.id', 'r.status', 'r.kind', 'r.uploaded_at', 'r.finished_at', 'r.error_code', 'r.error_message', 'r.station_id', 'r.original_name', 'r.is_return_test', 'r.purpose',
  'u.serial', 'p.code as product_code', 'l.code as lot_code', 's.name as station_name',
  'res.id as result_id', 'res.verdict', 'res.retest_reason', 'res.checks', 'm.version as mask_version',
]

interface SummaryRow {
  id: string
  status: RecordingStatus
  kind: 'sweep' | 'impedance_table'
  uploaded_at: Date
  finished_at: Date | null
  error_code: string | null
  error_message: string | null
  station_id: string | null
  original_name: string
  is_return_test: boolean
  purpose: RecordingPurpose
  serial: string
  product_code: string
  lot_code: string | null
  station_name: string | null
  result_id: string | null
  verdict: Verdict | null
  retest_reason: RetestReason | null
  /** Results stored before retests lack `undecided` and `warnings`. */
  checks: { checks: RecordingView['checks']; unmeasured: string[]; undecided?: string[]; warnings?: string[] } | null
  mask_version: number | null
}

function toSummary(r: SummaryRow): RecordingSummary {
  return {
    id: Number(r.id),
    serial: r.serial,
    productCode: r.product_code,
    lotCode: r.lot_code,
    stationId: r.station_id === null ? null : Number(r.station_id),
    stationName: r.station_name,
    kind: r.kind,
    status: r.status,
    verdict: r.verdict,
    retestReason: r.retest_reason ?? null,
    retestAdvice: r.retest_reason ? { ...RETEST_ADVICE[r.retest_reason] } : null,
    // A check that could not decide is not a failure: it is listed apart.
    failedChecks: (r.checks?.checks ?? []).filter((c) => !c.pass && !c.undecided).map((c) => c.name),
    undecidedChecks: (r.checks?.checks ?? []).filter((c) => c.undecided).map((c) => c.name),
    uploadedAt: r.uploaded_at.toISOString(),
    finishedAt: r.finished_at ? r.finished_at.toISOString() : null,
    originalName: r.original_name,
    returnTest: r.is_return_test,
    purpose: r.purpose,
    maskVersion: r.mask_version,
    error: r.error_code ? { code: r.error_code, message: r.error_message ?? '' } : null,
  }
}

const VIEW_COLUMNS = [...SUMMARY_COLUMNS, 'res.parameters', 'res.flags', 'res.engine_version', 'res.timings_ms', 'res.classical']
const CURVE_COLUMNS = ['res.curve_freq_hz', 'res.curve_spl_db', 'res.curve_impedance_ohm', 'res.curve_thd_pct', 'm.limits']

interface ViewRow extends SummaryRow {
  parameters: Record<string, unknown> | null
  flags: RecordingView['flags']
  classical: Record<string, unknown> | null
  engine_version: string | null
  timings_ms: Record<string, number> | null
  curve_freq_hz?: number[] | null
  curve_spl_db?: (number | null)[] | null
  curve_impedance_ohm?: (number | null)[] | null
  curve_thd_pct?: (number | null)[] | null
  limits?: { curves?: { splDb?: CurveLimit; impedanceOhm?: CurveLimit } } | null
}

function toView(r: ViewRow, curves: boolean): RecordingView {
  const { unmeasured = [], notes = [], thdAt = [], ...parameters } = (r.parameters ?? {}) as Record<string, unknown>
  const view: RecordingView = {
    ...toSummary(r),
    parameters: r.parameters ? (parameters as RecordingView['parameters']) : null,
    checks: r.checks?.checks ?? [],
    unmeasured: [...new Set([...(r.checks?.unmeasured ?? []), ...(unmeasured as string[])])],
    // The judge's warnings once judged; before, the engine's own (both absent in older results).
    warnings: r.checks?.warnings ?? (Array.isArray(parameters.warnings) ? (parameters.warnings as string[]) : []),
    notes: notes as string[],
    thdAt: thdAt as RecordingView['thdAt'],
    flags: r.flags ?? null,
    classical: r.classical ?? null,
    engineVersion: r.engine_version ?? null,
    timingsMs: r.timings_ms ?? null,
  }
  if (curves && r.curve_freq_hz) {
    view.curves = {
      freqHz: r.curve_freq_hz,
      splDb: r.curve_spl_db ?? null,
      impedanceOhm: r.curve_impedance_ohm ?? null,
      thdPct: r.curve_thd_pct ?? null,
      splUncertaintyDb: Array.isArray(parameters.splUncertaintyDb) ? (parameters.splUncertaintyDb as (number | null)[]) : null,
      thdFloorPct: Array.isArray(parameters.thdFloorPct) ? (parameters.thdFloorPct as (number | null)[]) : null,
      maskSplDb: r.limits?.curves?.splDb ?? null,
      maskImpedanceOhm: r.limits?.curves?.impedanceOhm ?? null,
    } satisfies RecordingCurves
  }
  return view
}

/** One recording with its result, as GET /api/recordings/:id answers. */
export async function getRecordingView(db: Knex, id: number, opts: { curves?: boolean } = {}): Promise<RecordingView | undefined> {
  const r = await viewQuery(db).where('r.id', id).first(opts.curves ? [...VIEW_COLUMNS, ...CURVE_COLUMNS] : VIEW_COLUMNS)
  return r ? toView(r as ViewRow, !!opts.curves) : undefined
}

/** The latest recordings, newest first, optionally of one station. */
export async function listRecentRecordings(db: Knex, filter: { stationId?: number; limit: number }): Promise<RecordingSummary[]> {
  const q = viewQuery(db).select(SUMMARY_COLUMNS).orderBy('r.id', 'desc').limit(filter.limit)
  if (filter.stationId) q.where('r.station_id', filter.stationId)
  return (await q).map(toSummary)
}

/** Every recording of a unit with its result, newest first (one query). */
export async function listUnitRecordings(db: Knex, unitId: number): Promise<RecordingView[]> {
  const rows = await viewQuery(db).where('r.unit_id', unitId).orderBy('r.id', 'desc').select(VIEW_COLUMNS)
  return (rows as ViewRow[]).map((r) => toView(r, false))
}
