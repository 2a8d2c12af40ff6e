/** Reference units: registered from their measurements on a trusted station, retired with a comment; both audited. */
import type { Knex } from 'knex'
import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import type { ReferenceUnitView } from '../../shared/types/api.ts'
import { MIN_REFERENCE_MEASUREMENTS, type ReferenceRegisterInput } from '../../shared/utils/reference-units.ts'
import { acceptedValues, verificationLimits } from '../limits/verification.ts'
import { getActiveMask } from '../repos/masks.ts'
import { getProductById } from '../repos/products.ts'
import { getReferenceUnit, insertReferenceUnit, retireReferenceUnit } from '../repos/reference-units.ts'
import { listUnitResultsOnStation } from '../repos/results.ts'
import { getStation } from '../repos/stations.ts'
import { getUnitBySerial } from '../repos/units.ts'
import { isUniqueViolation } from '../repos/pg-errors.ts'
import { recordAudit } from './audit.ts'

export const REFERENCE_ERROR_CODES = ['unknown_serial', 'unknown_station', 'unknown_reference_unit', 'reference_unit_exists', 'reference_not_measured', 'reference_retired'] as const satisfies readonly ErrorCode[]
export class ReferenceError extends DomainError<(typeof REFERENCE_ERROR_CODES)[number]> {}

/**
 * Registers a measured unit as a reference unit of its product: its accepted values are the mean of
 * its latest measurements on the trusted station (at least MIN_REFERENCE_MEASUREMENTS), its
 * verification limits the engineer's where given, else the default rule around them.
 * @throws ReferenceError for an unknown serial or station, a unit already registered, too few measurements.
 */
export async function registerReferenceUnit(db: Knex, input: ReferenceRegisterInput, by: number | null, o: { at?: Date } = {}): Promise<ReferenceUnitView> {
  const unit = await getUnitBySerial(db, input.serial)
  if (!unit) throw new ReferenceError('unknown_serial', `No unit ${input.serial} has been tested here`)
  const station = await getStation(db, input.station)
  if (!station) throw new ReferenceError('unknown_station', `No station ${input.station}`)
  const product = (await getProductById(db, Number(unit.product_id)))!
  const measured = (await listUnitResultsOnStation(db, product.id, Number(unit.id), station.id, input.measurements)).filter((r) => r.kind === 'sweep')
  if (measured.length < MIN_REFERENCE_MEASUREMENTS) {
    throw new ReferenceError(
      'reference_not_measured',
      `${input.serial} has ${measured.length} finished sweep measurement${measured.length === 1 ? '' : 's'} on ${station.name}; its accepted values need at least ${MIN_REFERENCE_MEASUREMENTS}: measure it again there`,
    )
  }
  const mask = await getActiveMask(db, product.id)
  const accepted = acceptedValues(measured, mask?.limits.thdBandHz ?? null)
  const limits = verificationLimits(accepted, mask?.limits.scalars ?? null, product.limitFloors, input.limits)
  try {
    return await db.transaction(async (trx) => {
      const id = await insertReferenceUnit(trx, {
        unitId: Number(unit.id),
        productId: product.id,
        description: input.description,
        keptAt: input.keptAt,
        stationId: station.id,
        accepted,
        limits,
        basisRecordingIds: measured.map((m) => m.recordingId),
        createdBy: by,
        createdAt: o.at,
      })
      const detail = { serial: input.serial, product: product.code, station: station.name, measurements: measured.length, maskVersion: mask?.version ?? null }
      await recordAudit(trx, { userId: by, action: 'reference_unit.register', entity: 'reference_unit', entityId: id, subject: input.serial, detail })
      return (await getReferenceUnit(trx, id))!
    })
  } catch (err) {
    if (isUniqueViolation(err)) throw new ReferenceError('reference_unit_exists', `${input.serial} is a reference unit already: retire it first to register it anew`)
    throw err
  }
}

/** Retires a reference unit in force, audited. @throws ReferenceError `unknown_reference_unit`, `reference_retired`. */
export async function retireReference(db: Knex, id: number, by: number | null, comment: string): Promise<ReferenceUnitView> {
  return db.transaction(async (trx) => {
    const ref = await getReferenceUnit(trx, id)
    if (!ref) throw new ReferenceError('unknown_reference_unit', `No reference unit ${id}`)
    if (!(await retireReferenceUnit(trx, id, by, comment))) throw new ReferenceError('reference_retired', `Reference unit ${ref.serial} was retired on ${ref.retiredAt}`)
    await recordAudit(trx, { userId: by, action: 'reference_unit.retire', entity: 'reference_unit', entityId: id, subject: ref.serial, comment })
    return (await getReferenceUnit(trx, id))!
  })
}
