/**
 * Station checks: each station's plan, its state (may it measure production now?), the checks its
 * reference units give, and the engineers' releases of a blocked station. Plans, failed checks and
 * releases are audited.
 */
import type { Knex } from 'knex'
import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import type { StationCheckStatus } from '../../shared/types/api.ts'
import type { AnalysisResult } from '../analysis/index.ts'
import { CHECK_LABELS } from '../../shared/utils/mask.ts'
import { stationState, type CheckPlan, type StationState } from '../../shared/utils/station-checks.ts'
import { judgeStationCheck } from '../limits/verification.ts'
import { getActiveMask } from '../repos/masks.ts'
import { getActiveReferenceOfUnit, getReferenceUnit } from '../repos/reference-units.ts'
import { getStation } from '../repos/stations.ts'
import { getCheckPlan, listProductCheckFigures, insertRelease, insertStationCheck, latestRelease, listStationChecks, nthProductionUploadAfter, writeCheckPlan } from '../repos/station-checks.ts'
import { recordAudit } from './audit.ts'
import { OFFSET_WARN_SHARE, stationOffsets, type StationOffset } from '../stats/station-offsets.ts'
import { getProductByCode } from '../repos/products.ts'

export const STATION_CHECK_ERROR_CODES = ['station_not_found', 'station_not_blocked', 'product_not_found'] as const satisfies readonly ErrorCode[]
export class StationCheckError extends DomainError<(typeof STATION_CHECK_ERROR_CODES)[number]> {}

/** Checks listed with a station's state. */
const LISTED_CHECKS = 20

/** Whether the station may measure production now (see stationState). */
export async function getStationState(db: Knex, stationId: number, now = new Date()): Promise<StationState> {
  const plan = await getCheckPlan(db, stationId)
  if (!plan) return stationState({ plan: null, lastCheck: null, unitsDueAt: null, release: null }, now)
  const [last] = await listStationChecks(db, stationId, 1)
  const lastCheck = last
    ? {
        at: new Date(last.checkedAt),
        pass: last.pass,
        serial: last.serial,
        failing: Object.entries(last.figures)
          .filter(([, f]) => !f.pass)
          .map(([name]) => CHECK_LABELS[name]?.label ?? name),
      }
    : null
  const unitsDueAt = plan.everyUnits !== null && lastCheck?.pass ? await nthProductionUploadAfter(db, stationId, lastCheck.at, plan.everyUnits) : null
  return stationState({ plan, lastCheck, unitsDueAt, release: await latestRelease(db, stationId) }, now)
}

/** A station's plan, state and latest checks. @throws StationCheckError `station_not_found`. */
export async function getStationCheckStatus(db: Knex, stationId: number): Promise<StationCheckStatus> {
  if (!(await getStation(db, stationId))) throw new StationCheckError('station_not_found', `No station ${stationId}`)
  const plan = await getCheckPlan(db, stationId)
  return {
    stationId,
    plan: plan && { shiftStarts: plan.shiftStarts, timeZone: plan.timeZone, everyHours: plan.everyHours, everyUnits: plan.everyUnits },
    state: await getStationState(db, stationId),
    checks: await listStationChecks(db, stationId, LISTED_CHECKS),
  }
}

/** Sets or (null) removes a station's check plan, audited. @throws StationCheckError `station_not_found`. */
export async function setCheckPlan(db: Knex, stationId: number, plan: CheckPlan | null, by: number | null): Promise<StationCheckStatus> {
  const station = await getStation(db, stationId)
  if (!station) throw new StationCheckError('station_not_found', `No station ${stationId}`)
  await db.transaction(async (trx) => {
    await writeCheckPlan(trx, stationId, plan, by)
    await recordAudit(trx, { userId: by, action: 'station.check_plan', entity: 'station', entityId: stationId, subject: station.name, detail: { plan } })
  })
  return getStationCheckStatus(db, stationId)
}

/**
 * Lets a blocked station measure until `hours` from now, with the engineer's reason, audited.
 * @throws StationCheckError `station_not_found`, `station_not_blocked`.
 */
export async function releaseStation(db: Knex, stationId: number, by: number | null, comment: string, hours: number): Promise<StationCheckStatus> {
  const station = await getStation(db, stationId)
  if (!station) throw new StationCheckError('station_not_found', `No station ${stationId}`)
  const state = await getStationState(db, stationId)
  if (!state.blocked) throw new StationCheckError('station_not_blocked', `${station.name} is not blocked (${state.reason})`)
  await db.transaction(async (trx) => {
    const id = await insertRelease(trx, stationId, by, comment, hours)
    await recordAudit(trx, { userId: by, action: 'station.release', entity: 'station', entityId: stationId, subject: station.name, comment, detail: { releaseId: id, hours, blockedSince: state.since, reason: state.reason } })
  })
  return getStationCheckStatus(db, stationId)
}

/**
 * Judges an analysed station-check recording against its reference unit's verification limits and
 * stores the check (in the caller's transaction), dated when the unit was measured (the upload); a
 * failed check is audited, as it blocks the station.
 */
export async function recordStationCheck(trx: Knex.Transaction, rec: { id: number; unitId: number; stationId: number | null; productId: number; uploadedAt: Date }, analysis: AnalysisResult): Promise<void> {
  if (rec.stationId === null) return
  const active = await getActiveReferenceOfUnit(trx, rec.unitId)
  const ref = active && (await getReferenceUnit(trx, active.id))
  if (!ref) return
  const mask = await getActiveMask(trx, rec.productId)
  const source = { parameters: analysis.parameters, curves: analysis.curves }
  const checked = judgeStationCheck(source, ref.accepted, ref.limits, mask?.limits.thdBandHz ?? null)
  await insertStationCheck(trx, { stationId: rec.stationId, referenceUnitId: ref.id, recordingId: rec.id, pass: checked.pass, figures: checked.figures, checkedAt: rec.uploadedAt })
  if (!checked.pass) {
    const failing = Object.entries(checked.figures).filter(([, f]) => !f.pass).map(([name]) => name)
    await recordAudit(trx, { userId: null, action: 'station.check_failed', entity: 'station', entityId: rec.stationId, subject: ref.serial, detail: { recordingId: rec.id, referenceUnitId: ref.id, failing } })
  }
}

/**
 * Each station's offset per figure for a product: from every check of the product's reference
 * units, value − accepted value (see stationOffsets). @throws StationCheckError `product_not_found`.
 */
export async function getStationOffsets(db: Knex, productCode: string): Promise<{ product: string; warnShare: number; offsets: StationOffset[] }> {
  if (!(await getProductByCode(db, productCode))) throw new StationCheckError('product_not_found', `No product ${productCode}`)
  const checks = await listProductCheckFigures(db, productCode)
  const diffs = checks.flatMap((c) =>
    Object.entries(c.figures).flatMap(([figure, f]) =>
      f.value === null ? [] : [{ stationId: c.stationId, stationName: c.stationName, figure, difference: f.value - f.accepted, toleranceWidth: c.limits[figure as keyof typeof c.limits]?.toleranceWidth ?? null }],
    ),
  )
  return { product: productCode, warnShare: OFFSET_WARN_SHARE, offsets: stationOffsets(diffs) }
}
