import type { Knex } from 'knex'
import type { LotSummary } from '../../shared/types/reports.ts'
import type { RetestReason, Verdict } from '../../shared/utils/verdict.ts'

export interface LotRow {
  id: number
  code: string
  productId: number
  productCode: string
  productName: string
  createdAt: Date
  closedAt: Date | null
}

/** A lot with its product; undefined for an unknown code. */
export async function getLotByCode(db: Knex, code: string): Promise<LotRow | undefined> {
  const r = await db('lots as l')
    .join('products as p', 'p.id', 'l.product_id')
    .where('l.code', code)
    .first('l.id', 'l.code', 'l.product_id', 'p.code as product_code', 'p.name as product_name', 'l.created_at', 'l.closed_at')
  return (
    r && {
      id: Number(r.id),
      code: r.code,
      productId: Number(r.product_id),
      productCode: r.product_code,
      productName: r.product_name,
      createdAt: r.created_at,
      closedAt: r.closed_at,
    }
  )
}

/** One production result of a unit of a lot, with the figures the lot report reads. */
export interface LotResultRow {
  unitId: number
  serial: string
  resultId: number
  uploadedAt: Date
  verdict: Verdict | null
  /** Why a `retest` result could not decide (null otherwise). */
  retestReason: RetestReason | null
  /** The checks this result failed (value and bounds as judged; a check that could not decide is no failure). */
  failedChecks: { name: string; value: number | null; low: number | null; high: number | null }[]
  /** A check of this result decided within its uncertainty of a limit. */
  marginal: boolean
  fsHz: number | null
  re20Ohm: number | null
  reOhm: number | null
  qts: number | null
  sensitivityDb: number | null
  thdMaxPct: number | null
  rubBuzzDb: number | null
}

/**
 * Every production result (return tests left out) of the units of a lot, oldest first: upload time,
 * then result id for uploads in the same instant.
 */
export async function listLotResults(db: Knex, lotId: number): Promise<LotResultRow[]> {
  const rows = await db('units as u')
    .join('results as res', 'res.unit_id', 'u.id')
    .join('recordings as r', 'r.id', 'res.recording_id')
    .where({ 'u.lot_id': lotId, 'r.purpose': 'production' })
    .orderBy([{ column: 'r.uploaded_at' }, { column: 'res.id' }])
    .select(
      'u.id as unit_id', 'u.serial', 'res.id as result_id', 'r.uploaded_at', 'res.verdict', 'res.retest_reason',
      // Only the failed checks travel: most results pass, and parsing every check of a lot's results dominated the report's time.
      db.raw(`jsonb_path_query_array(res.checks, '$.checks[*] \\? (@.pass == false && !(@.undecided == true))') as failed_checks`),
      db.raw(`coalesce(jsonb_path_exists(res.checks, '$.checks[*] \\? (@.marginal == true)'), false) as marginal`),
      'res.fs_hz', 'res.re20_ohm', 'res.re_ohm', 'res.qts', 'res.sensitivity_db', 'res.rub_buzz_db',
      // THD max as judged: a mask with a THD band reads it inside the band (the check's value), not over the whole sweep.
      db.raw(`coalesce((jsonb_path_query_first(res.checks, '$.checks[*] \\? (@.name == "thdMaxPct").value'))::float8, res.thd_max_pct) as thd_max_pct`),
    )
  return rows.map((r) => ({
    unitId: Number(r.unit_id),
    serial: r.serial,
    resultId: Number(r.result_id),
    uploadedAt: r.uploaded_at,
    verdict: r.verdict,
    retestReason: r.retest_reason ?? null,
    failedChecks: (r.failed_checks ?? []) as LotResultRow['failedChecks'],
    marginal: r.marginal === true,
    fsHz: r.fs_hz,
    re20Ohm: r.re20_ohm,
    reOhm: r.re_ohm,
    qts: r.qts,
    sensitivityDb: r.sensitivity_db,
    thdMaxPct: r.thd_max_pct,
    rubBuzzDb: r.rub_buzz_db,
  }))
}

/** Fs and Re (20 °C, raw Re without an ambient) of a mask's golden units, from the recordings the mask was built on. */
export async function listGoldenFigures(db: Knex, maskId: number): Promise<{ serial: string; fsHz: number | null; re20Ohm: number | null }[]> {
  const rows = await db('mask_golden as g')
    .join('results as res', 'res.recording_id', 'g.recording_id')
    .where('g.mask_id', maskId)
    .orderBy('g.serial')
    .select('g.serial', 'res.fs_hz', db.raw('coalesce(res.re20_ohm, res.re_ohm) as re'))
  return rows.map((r: { serial: string; fs_hz: number | null; re: number | null }) => ({ serial: r.serial, fsHz: r.fs_hz, re20Ohm: r.re }))
}

export interface LotFilter {
  productCode?: string
  open?: boolean
  limit?: number
}

/**
 * Lots with their yield, newest first. Per unit: its first production result and its latest
 * decisive one (definitions as in server/stats/yield.ts: first-pass yield over units whose first
 * result is judged, a first retest counting as no first pass; final yield over units with a
 * decisive result).
 */
export async function listLots(db: Knex, filter: LotFilter = {}): Promise<LotSummary[]> {
  const lots = db('lots as l')
    .join('products as p', 'p.id', 'l.product_id')
    .select('l.id', 'l.code', 'l.created_at', 'l.closed_at', 'p.code as product_code', 'p.name as product_name')
    .orderBy([{ column: 'l.created_at', order: 'desc' }, { column: 'l.id', order: 'desc' }])
    .limit(filter.limit ?? 200)
  if (filter.productCode) lots.where('p.code', filter.productCode)
  if (filter.open === true) lots.whereNull('l.closed_at')
  if (filter.open === false) lots.whereNotNull('l.closed_at')
  const { rows } = await db.raw(
    `
    WITH lot AS ?,
    per_unit AS (
      SELECT u.lot_id,
             (array_agg(res.verdict ORDER BY r.uploaded_at, res.id))[1] AS first_verdict,
             (array_agg(res.verdict ORDER BY r.uploaded_at DESC, res.id DESC) FILTER (WHERE res.verdict IN ('pass', 'fail')))[1] AS last_verdict,
             max(r.uploaded_at) AS last_at
        FROM lot
        JOIN units u ON u.lot_id = lot.id
        JOIN results res ON res.unit_id = u.id
        JOIN recordings r ON r.id = res.recording_id AND r.purpose = 'production'
       GROUP BY u.lot_id, u.id
    ),
    per_lot AS (
      SELECT lot_id,
             count(*) AS tested,
             count(*) FILTER (WHERE first_verdict IS NOT NULL) AS first_judged,
             count(*) FILTER (WHERE first_verdict = 'pass') AS first_pass,
             count(*) FILTER (WHERE last_verdict IS NOT NULL) AS judged,
             count(*) FILTER (WHERE last_verdict = 'pass') AS final_pass,
             max(last_at) AS last_at
        FROM per_unit GROUP BY lot_id
    )
    SELECT lot.*, coalesce(pl.tested, 0) AS tested, coalesce(pl.first_judged, 0) AS first_judged, coalesce(pl.first_pass, 0) AS first_pass,
           coalesce(pl.judged, 0) AS judged, coalesce(pl.final_pass, 0) AS final_pass, pl.last_at
      FROM lot LEFT JOIN per_lot pl ON pl.lot_id = lot.id
     ORDER BY lot.created_at DESC, lot.id DESC`,
    // The filter's query as a bound subquery (its values stay bindings, never SQL text).
    [lots],
  )
  const ratio = (a: string, b: string) => (Number(b) === 0 ? null : Number(a) / Number(b))
  return rows.map(
    (r: SummaryRow): LotSummary => ({
      code: r.code,
      productCode: r.product_code,
      productName: r.product_name,
      createdAt: new Date(r.created_at).toISOString(),
      closedAt: r.closed_at ? new Date(r.closed_at).toISOString() : null,
      unitsTested: Number(r.tested),
      firstPassYield: ratio(r.first_pass, r.first_judged),
      finalYield: ratio(r.final_pass, r.judged),
      lastTestAt: r.last_at ? new Date(r.last_at).toISOString() : null,
    }),
  )
}

interface SummaryRow {
  code: string
  product_code: string
  product_name: string
  created_at: Date
  closed_at: Date | null
  tested: string
  first_judged: string
  first_pass: string
  judged: string
  final_pass: string
  last_at: Date | null
}

export interface LineProductDay {
  line: string
  productCode: string
  unitsTested: number
  passed: number
  failed: number
}

/**
 * Units tested on each line (stations.line) and product in [from, to), production only; each unit
 * counted once by its latest decisive result in the window (a second test that passed counts as
 * passed; a unit with only `retest` results in the window is tested, neither passed nor failed).
 */
export async function listDayYield(db: Knex, from: Date, to: Date): Promise<LineProductDay[]> {
  const { rows } = await db.raw(
    `
    SELECT line, product_code, count(*) AS tested,
           count(*) FILTER (WHERE last_verdict = 'pass') AS passed,
           count(*) FILTER (WHERE last_verdict = 'fail') AS failed
      FROM (
        SELECT coalesce(s.line, '') AS line, p.code AS product_code, res.unit_id,
               (array_agg(res.verdict ORDER BY r.uploaded_at DESC, res.id DESC) FILTER (WHERE res.verdict IN ('pass', 'fail')))[1] AS last_verdict
          FROM recordings r
          JOIN results res ON res.recording_id = r.id
          JOIN units u ON u.id = res.unit_id
          JOIN products p ON p.id = u.product_id
          LEFT JOIN stations s ON s.id = r.station_id
         WHERE r.uploaded_at >= ? AND r.uploaded_at < ? AND r.purpose = 'production'
         GROUP BY 1, 2, 3
      ) per_unit
     GROUP BY line, product_code
     ORDER BY line, product_code`,
    [from, to],
  )
  return rows.map((r: { line: string; product_code: string; tested: string; passed: string; failed: string }) => ({
    line: r.line,
    productCode: r.product_code,
    unitsTested: Number(r.tested),
    passed: Number(r.passed),
    failed: Number(r.failed),
  }))
}


/** A unit of a lot whose latest results are retests, at least its product's retest limit of them in a row. */
export interface NeedsReviewRow {
  serial: string
  /** Retests since its latest decisive (pass or fail) result. */
  retests: number
  /** Their reasons, newest first (one per retest). */
  reasons: RetestReason[]
  lastTestAt: Date
  /** The newest of those retests' recording. */
  latestRecordingId: number
}

/**
 * Units of a lot that need review: their production results since the latest decisive one (return
 * tests left out; unjudged results neither count nor break the run) are retests, at least
 * products.retest_limit of them. Oldest run first, in production order (upload time, then result id).
 */
export async function listNeedsReview(db: Knex, lotId: number): Promise<NeedsReviewRow[]> {
  const { rows } = await db.raw(
    `
    WITH ordered AS (
      SELECT u.id AS unit_id, u.serial, p.retest_limit, res.verdict, res.retest_reason, r.id AS recording_id, r.uploaded_at, res.id AS result_id,
             count(*) FILTER (WHERE res.verdict IN ('pass', 'fail'))
               OVER (PARTITION BY u.id ORDER BY r.uploaded_at DESC, res.id DESC ROWS BETWEEN UNBOUNDED PRECEDING AND CURRENT ROW) AS decisive_since
        FROM units u
        JOIN products p ON p.id = u.product_id
        JOIN results res ON res.unit_id = u.id
        JOIN recordings r ON r.id = res.recording_id AND r.purpose = 'production'
       WHERE u.lot_id = ?
    )
    SELECT serial, count(*) AS retests,
           array_agg(retest_reason ORDER BY uploaded_at DESC, result_id DESC) AS reasons,
           max(uploaded_at) AS last_at,
           (array_agg(recording_id ORDER BY uploaded_at DESC, result_id DESC))[1] AS latest_recording_id,
           min(uploaded_at) AS first_at
      FROM ordered
     WHERE decisive_since = 0 AND verdict = 'retest'
     GROUP BY unit_id, serial, retest_limit
    HAVING count(*) >= retest_limit
     ORDER BY first_at, serial`,
    [lotId],
  )
  return rows.map((r: { serial: string; retests: string; reasons: RetestReason[]; last_at: Date; latest_recording_id: string }) => ({
    serial: r.serial,
    retests: Number(r.retests),
    reasons: r.reasons,
    lastTestAt: r.last_at,
    latestRecordingId: Number(r.latest_recording_id),
  }))
}
