import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import type { Knex } from 'knex'
import type { RecordingView } from '../../shared/types/api.ts'
import type { UnitSearchAnswer, UnitTest, UnitView } from '../../shared/types/units.ts'
import { NEAREST_LIMIT, SEARCH_LIST_LIMIT, rankNearest } from '../../shared/utils/units.ts'
import { retestsInARow, unitVerdictOf } from '../../shared/utils/verdict.ts'
import { recordAudit } from './audit.ts'
import { getProductById } from '../repos/products.ts'
import { getRecordingView, listUnitRecordings } from '../repos/recordings.ts'
import {
  findUnitIdsByPrefix,
  findUnitIdsBySerialIgnoringCase,
  getLotCode,
  getUnitBySerial,
  getUnitHits,
  listTestContext,
  nearSerialCandidates,
  serialsEndingWith,
} from '../repos/units.ts'
import { renderCertificatePdf, type CertificateData } from '../reports/certificate.ts'
import { currentMaskOpinion } from './current-mask.ts'

/** Shortest query for which serials ending with it are offered (fewer digits match too many units). */
const SUFFIX_MIN_CHARS = 4

/**
 * Finds units by what was typed or scanned (already normalised by unitSearchQuerySchema): the
 * serial itself (case ignored), else the serials starting with it, newest first, else "never
 * tested here" with the nearest serials (one typing mistake away, or ending with the query).
 */
export async function searchUnits(db: Knex, query: string): Promise<UnitSearchAnswer> {
  const exact = await findUnitIdsBySerialIgnoringCase(db, query)
  if (exact.length) {
    return { query, match: 'exact', units: await getUnitHits(db, { ids: exact.map((u) => u.id) }), more: false, nearest: [] }
  }
  const { ids, more } = await findUnitIdsByPrefix(db, query, SEARCH_LIST_LIMIT)
  if (ids.length) return { query, match: 'prefix', units: await getUnitHits(db, { ids }), more, nearest: [] }
  const candidates = await nearSerialCandidates(db, query)
  if (query.length >= SUFFIX_MIN_CHARS) candidates.push(...(await serialsEndingWith(db, query, NEAREST_LIMIT)))
  const nearest = rankNearest(query, candidates, NEAREST_LIMIT)
  return { query, match: 'unknown', units: [], more: false, nearest: nearest.length ? await getUnitHits(db, { serials: nearest }) : [] }
}

/** The unit with this serial: as written, else the only one spelled the same but for case. */
async function findUnit(db: Knex, serial: string) {
  const unit = await getUnitBySerial(db, serial)
  if (unit) return unit
  const same = await findUnitIdsBySerialIgnoringCase(db, serial)
  return same.length === 1 ? getUnitBySerial(db, same[0]!.serial) : undefined
}

/**
 * A unit's factory record: product, lot and every recording with its result, newest first, with
 * who ran each test, where, and the mask version that judged it. Its verdict is its latest
 * production result's, passing over retests (unitVerdictOf); beside each historic verdict, what the current mask says (currentMaskOpinion:
 * a re-judgement shown, never stored).
 */
export async function getUnitView(db: Knex, serial: string): Promise<UnitView | undefined> {
  const unit = await findUnit(db, serial)
  if (!unit) return undefined
  const productId = Number(unit.product_id)
  const [product, lot, recordings, context] = await Promise.all([
    getProductById(db, productId),
    unit.lot_id ? getLotCode(db, Number(unit.lot_id)) : Promise.resolve(null),
    listUnitRecordings(db, Number(unit.id)),
    listTestContext(db, Number(unit.id)),
  ])
  const byId = new Map(context.map((c) => [c.id, c]))
  const tests: UnitTest[] = recordings.map((r, i) => {
    const c = byId.get(r.id)
    return {
      ...r,
      number: recordings.length - i,
      operator: c?.uploadedBy ? { kind: 'person', name: c.uploadedBy } : r.stationName ? { kind: 'station', name: r.stationName } : null,
      stationLine: c?.stationLine ?? null,
      profileVersion: c?.profileVersion ?? null,
      ambientC: c?.ambientC ?? null,
      note: c?.note ?? null,
    }
  })
  const production = recordings.filter((r) => r.status === 'done' && !r.returnTest)
  // A retest decides nothing: the unit stands by its latest other test (unitVerdictOf), and a certificate states that one.
  const latest = production.find((r) => r.verdict !== 'retest') ?? production[0]
  const verdicts = production.map((r) => r.verdict)
  const inARow = retestsInARow(verdicts)
  const currentMask = await currentMaskOpinion(db, product!, recordings.map((r) => r.id))
  return {
    serial: unit.serial,
    product: product!,
    lot: lot ?? null,
    verdict: unitVerdictOf(verdicts),
    retests: { inARow, limit: product!.retestLimit, needsReview: inARow >= product!.retestLimit },
    recordings: tests,
    latestProductionId: latest?.id ?? null,
    registeredAt: unit.created_at.toISOString(),
    currentMask,
  }
}

export const CERTIFICATE_ERROR_CODES = ['unit_not_found', 'no_production_test'] as const satisfies readonly ErrorCode[]
/** Why no certificate can be issued. */
export class CertificateError extends DomainError<(typeof CERTIFICATE_ERROR_CODES)[number]> {}

/**
 * What a unit's test certificate states: its latest finished production test (return tests never
 * certify a unit), with the curves and the mask that judged it.
 * @throws CertificateError for an unknown serial or a unit without a finished production test.
 */
export async function getCertificateData(db: Knex, serial: string, issuedAt = new Date()): Promise<CertificateData> {
  const unit = await getUnitView(db, serial)
  if (!unit) throw new CertificateError('unit_not_found', `Unit ${serial} has never been tested here`)
  const test = unit.recordings.find((r) => r.id === unit.latestProductionId)
  const withCurves: RecordingView | undefined = test && (await getRecordingView(db, test.id, { curves: true }))
  if (!test || !withCurves) {
    throw new CertificateError('no_production_test', `Unit ${unit.serial} has no finished production test: there is nothing to certify yet`)
  }
  return { unit, test, curves: withCurves.curves ?? null, issuedAt: issuedAt.toISOString() }
}

/** The file name a certificate is given, from the serial (already limited to letters, digits and - _ .). */
export function certificateFilename(serial: string): string {
  return `certificate-${serial}.pdf`
}

/**
 * Renders a unit's certificate for download and records the export in the audit log.
 * @throws CertificateError (see getCertificateData).
 */
export async function downloadCertificate(db: Knex, serial: string, by: { id: number }): Promise<{ pdf: Buffer; filename: string }> {
  const data = await getCertificateData(db, serial)
  const pdf = await renderCertificatePdf(data)
  await recordAudit(db, {
    userId: by.id,
    action: 'certificate.download',
    entity: 'unit',
    entityId: data.unit.serial,
    detail: { recordingId: data.test.id, verdict: data.test.verdict, maskVersion: data.test.maskVersion },
  })
  return { pdf, filename: certificateFilename(data.unit.serial) }
}
