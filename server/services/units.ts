import type { Knex } from 'knex'
import type { UnitView } from '../../shared/types/api.ts'
import { getActiveMask } from '../repos/masks.ts'
import { getProductById } from '../repos/products.ts'
import { listUnitRecordings } from '../repos/recordings.ts'
import { listProductResults } from '../repos/results.ts'
import { getLotCode, getUnitBySerial } from '../repos/units.ts'
import { judge } from '../verdict/judge.ts'

/**
 * A unit with its product, lot and every recording with its result, newest first. Its verdict is
 * its latest production result's; beside each historic verdict, what the current mask says.
 */
export async function getUnitView(db: Knex, serial: string): Promise<UnitView | undefined> {
  const unit = await getUnitBySerial(db, serial)
  if (!unit) return undefined
  const productId = Number(unit.product_id)
  const [product, lot, recordings, active] = await Promise.all([
    getProductById(db, productId),
    unit.lot_id ? getLotCode(db, Number(unit.lot_id)) : Promise.resolve(null),
    listUnitRecordings(db, Number(unit.id)),
    getActiveMask(db, productId),
  ])
  const latest = recordings.find((r) => r.status === 'done' && !r.returnTest)
  let currentMask: UnitView['currentMask'] = null
  if (active) {
    const stored = await listProductResults(db, productId, { recordingIds: recordings.map((r) => r.id), includeReturnTests: true })
    currentMask = {
      version: active.version,
      results: stored.map((r) => {
        const j = judge(r, active.limits, product!.ratedImpedanceOhm)
        return { recordingId: r.recordingId, verdict: j.verdict, failedChecks: j.checks.filter((c) => !c.pass).map((c) => c.name) }
      }),
    }
  }
  return { serial: unit.serial, product: product!, lot: lot ?? null, verdict: latest?.verdict ?? null, recordings, currentMask }
}
