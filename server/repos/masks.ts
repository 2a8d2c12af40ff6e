import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import type { Knex } from 'knex'
import { maskLimitsSchema, type MaskLimits, type MaskLimitsInput, type MaskStatus } from '../../shared/utils/mask.ts'
import type { MaskProposal, MaskSummary } from '../../shared/types/api.ts'

/** A change the mask's state does not allow (e.g. editing a released mask). */
export const MASK_STATE_ERROR_CODES = ['mask_not_draft', 'mask_not_released', 'mask_older_than_active', 'unknown_mask'] as const satisfies readonly ErrorCode[]
export class MaskStateError extends DomainError<(typeof MASK_STATE_ERROR_CODES)[number]> {}

export interface ActiveMask {
  id: number
  version: number
  limits: MaskLimits
}

export interface MaskRow {
  id: string
  product_id: string
  version: number
  status: MaskStatus
  name: string
  limits: unknown
  options: Record<string, unknown>
  /** jsonb: how the limits were proposed (null for masks made before proposals were recorded). */
  proposal: MaskProposal | null
  created_by: string | null
  created_at: Date
  released_at: Date | null
  released_by: string | null
  release_comment: string | null
  retired_at: Date | null
}

/**
 * The released mask that judges a product's units now, if any. With `lockProduct` (inside a
 * transaction) the product row is share-locked, so a release cannot slip in before the caller commits.
 */
export async function getActiveMask(db: Knex, productId: number, opts: { lockProduct?: boolean } = {}): Promise<ActiveMask | undefined> {
  const q = db('products as p')
    .join('masks as m', 'm.id', 'p.active_mask_id')
    .where({ 'p.id': productId, 'm.status': 'released' })
    .first('m.id', 'm.version', 'm.limits')
  const r = await (opts.lockProduct ? q.forShare('p') : q)
  return r && { id: Number(r.id), version: r.version, limits: maskLimitsSchema.parse(r.limits) }
}

function summaryQuery(db: Knex) {
  return db('masks as m')
    .join('products as p', 'p.id', 'm.product_id')
    .leftJoin('users as cu', 'cu.id', 'm.created_by')
    .leftJoin('users as ru', 'ru.id', 'm.released_by')
    .select(
      'm.*',
      'p.code as product_code',
      'cu.display_name as created_by_name',
      'ru.display_name as released_by_name',
      db('mask_golden as g').count('*').whereRaw('g.mask_id = m.id').as('golden_count'),
    )
}

type SummaryRow = MaskRow & { product_code: string; created_by_name: string | null; released_by_name: string | null; golden_count: string }

function toSummary(r: SummaryRow): MaskSummary {
  const iso = (d: Date | null) => (d ? d.toISOString() : null)
  return {
    id: Number(r.id),
    productCode: r.product_code,
    version: r.version,
    status: r.status,
    name: r.name,
    goldenCount: Number(r.golden_count),
    createdAt: r.created_at.toISOString(),
    createdBy: r.created_by_name,
    releasedAt: iso(r.released_at),
    releasedBy: r.released_by_name,
    releaseComment: r.release_comment,
    retiredAt: iso(r.retired_at),
  }
}

export async function listMasks(db: Knex, filter: { productCode?: string }): Promise<MaskSummary[]> {
  const q = summaryQuery(db).orderBy([{ column: 'p.code' }, { column: 'm.version', order: 'desc' }])
  if (filter.productCode) q.where('p.code', filter.productCode)
  return ((await q) as SummaryRow[]).map(toSummary)
}

export async function getMaskSummary(
  db: Knex,
  id: number,
): Promise<(MaskSummary & { productId: number; limits: MaskLimits; options: Record<string, unknown>; proposal: MaskProposal | null }) | undefined> {
  const r = (await summaryQuery(db).where('m.id', id).first()) as SummaryRow | undefined
  return r && { ...toSummary(r), productId: Number(r.product_id), limits: maskLimitsSchema.parse(r.limits), options: r.options, proposal: r.proposal ?? null }
}

export interface GoldenRef {
  unitId: number
  recordingId: number
  serial: string
}

export async function listGolden(db: Knex, maskId: number): Promise<GoldenRef[]> {
  const rows = await db('mask_golden').where({ mask_id: maskId }).orderBy('serial')
  return rows.map((r: { unit_id: string; recording_id: string; serial: string }) => ({ unitId: Number(r.unit_id), recordingId: Number(r.recording_id), serial: r.serial }))
}

export interface NewMask {
  productId: number
  name: string
  limits: MaskLimitsInput
  createdBy: number | null
  options?: Record<string, unknown>
  proposal?: MaskProposal
  golden?: GoldenRef[]
}

/** A new draft with the next version number for its product, with its golden units. */
export async function createMaskDraft(db: Knex, m: NewMask): Promise<number> {
  return db.transaction(async (trx) => {
    // Versions are numbered per product: serialise concurrent drafts of one product.
    await trx.raw('SELECT pg_advisory_xact_lock(?, ?)', [0x6d61736b, m.productId])
    const { max } = (await trx('masks').where({ product_id: m.productId }).max<{ max: number | null }>('version as max').first())!
    const [row] = await trx('masks')
      .insert({
        product_id: m.productId,
        version: (max ?? 0) + 1,
        status: 'draft',
        name: m.name,
        limits: JSON.stringify(maskLimitsSchema.parse(m.limits)),
        options: JSON.stringify(m.options ?? {}),
        proposal: m.proposal ? JSON.stringify(m.proposal) : null,
        created_by: m.createdBy,
      })
      .returning('id')
    if (m.golden?.length) {
      await trx('mask_golden').insert(m.golden.map((g) => ({ mask_id: row.id, unit_id: g.unitId, recording_id: g.recordingId, serial: g.serial })))
    }
    return Number(row.id)
  })
}

/** Edits a draft. @throws MaskStateError `mask_not_draft` once released or retired. */
export async function updateMaskDraft(db: Knex, id: number, patch: { name?: string; limits?: MaskLimitsInput }): Promise<void> {
  await db.transaction(async (trx) => {
    const mask = await trx('masks').where({ id }).forUpdate().first()
    if (!mask) throw new MaskStateError('unknown_mask', `No mask ${id}`)
    if (mask.status !== 'draft') throw new MaskStateError('mask_not_draft', `Mask v${mask.version} is ${mask.status}: it cannot change. Build a new version instead.`)
    await trx('masks')
      .where({ id })
      .update({ ...(patch.name !== undefined ? { name: patch.name } : {}), ...(patch.limits ? { limits: JSON.stringify(maskLimitsSchema.parse(patch.limits)) } : {}) })
  })
}

/** Locks the product row a mask belongs to. @throws MaskStateError `unknown_mask`. */
async function lockProductOfMask(trx: Knex.Transaction, maskId: number) {
  const product = await trx('products as p').join('masks as m', 'm.product_id', 'p.id').where('m.id', maskId).forUpdate('p').first('p.*')
  if (!product) throw new MaskStateError('unknown_mask', `No mask ${maskId}`)
  return product
}

export interface ReleaseOptions {
  by: number | null
  comment: string
  /** When it was released; only the demo seed sets it, to lay out a believable history. */
  at?: Date
}

export interface ReleasedMask {
  version: number
  productId: number
  /** For the audit entry: the product's code and the mask this one replaced (null: none was active). */
  productCode: string
  replaced: number | null
  /** The mask as it now judges the product, for the caller's work in the same transaction. */
  mask: ActiveMask
}

/**
 * Releases a draft: it becomes the product's active mask, the previous one is retired (the caller
 * audits who and why, with the product code and the replaced mask returned here). The product row stays locked until the transaction ends: pass a
 * transaction to do more under that lock (judging the unjudged results is the service's work).
 * @throws MaskStateError `mask_not_draft`.
 */
export async function releaseMask(db: Knex, maskId: number, o: ReleaseOptions): Promise<ReleasedMask> {
  return db.transaction(async (trx) => {
    // Product row first, then masks: the same order as retire, so the two cannot deadlock.
    const product = await lockProductOfMask(trx, maskId)
    const mask = await trx('masks').where({ id: maskId }).forUpdate().first()
    if (mask.status !== 'draft') throw new MaskStateError('mask_not_draft', `Mask v${mask.version} is already ${mask.status}`)
    if (product.active_mask_id) {
      const active = await trx('masks').where({ id: product.active_mask_id }).first('version')
      if (active.version > mask.version) {
        throw new MaskStateError('mask_older_than_active', `Draft v${mask.version} is older than the active v${active.version}: build a new version from it instead`)
      }
    }
    const at = o.at ?? new Date()
    if (product.active_mask_id) {
      await trx('masks').where({ id: product.active_mask_id }).update({ status: 'retired', retired_at: at, retired_by: o.by, retire_comment: `replaced by v${mask.version}` })
    }
    await trx('masks').where({ id: maskId }).update({ status: 'released', released_at: at, released_by: o.by, release_comment: o.comment })
    await trx('products').where({ id: mask.product_id }).update({ active_mask_id: maskId, updated_at: trx.fn.now() })
    const active = { id: maskId, version: mask.version, limits: maskLimitsSchema.parse(mask.limits) }
    return { version: mask.version, productId: Number(mask.product_id), productCode: product.code, replaced: product.active_mask_id ? Number(product.active_mask_id) : null, mask: active }
  })
}

/**
 * Retires a released mask: the product then has no active mask (new results stay unjudged until
 * another is released); the caller audits it. @throws MaskStateError `mask_not_released`.
 */
export async function retireMask(db: Knex, maskId: number, by: number | null, comment: string | null): Promise<{ version: number }> {
  return db.transaction(async (trx) => {
    await lockProductOfMask(trx, maskId)
    const mask = await trx('masks').where({ id: maskId }).forUpdate().first()
    if (mask.status !== 'released') throw new MaskStateError('mask_not_released', `Only a released mask can be retired; v${mask.version} is ${mask.status}`)
    await trx('masks').where({ id: maskId }).update({ status: 'retired', retired_at: trx.fn.now(), retired_by: by, retire_comment: comment })
    await trx('products').where({ id: mask.product_id, active_mask_id: maskId }).update({ active_mask_id: null, updated_at: trx.fn.now() })
    return { version: mask.version }
  })
}
