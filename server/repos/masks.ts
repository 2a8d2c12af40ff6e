import type { Knex } from 'knex'
import { maskLimitsSchema, type MaskLimits } from '../../shared/utils/mask.ts'

export interface ActiveMask {
  id: number
  version: number
  limits: MaskLimits
}

/** The released mask that judges a product's units now, if any. */
export async function getActiveMask(db: Knex, productId: number): Promise<ActiveMask | undefined> {
  const r = await db('products as p')
    .join('masks as m', 'm.id', 'p.active_mask_id')
    .where({ 'p.id': productId, 'm.status': 'released' })
    .first('m.id', 'm.version', 'm.limits')
  return r && { id: Number(r.id), version: r.version, limits: maskLimitsSchema.parse(r.limits) }
}

export interface NewMask {
  productId: number
  name: string
  limits: MaskLimits
  createdBy: number | null
}

/** A new draft with the next version number for its product. */
export async function createMaskDraft(db: Knex, m: NewMask): Promise<number> {
  return db.transaction(async (trx) => {
    await trx.raw('SELECT pg_advisory_xact_lock(?, ?)', [0x6d61736b, m.productId])
    const { max } = (await trx('masks').where({ product_id: m.productId }).max<{ max: number | null }>('version as max').first())!
    const [row] = await trx('masks')
      .insert({ product_id: m.productId, version: (max ?? 0) + 1, status: 'draft', name: m.name, limits: JSON.stringify(m.limits), created_by: m.createdBy })
      .returning('id')
    return Number(row.id)
  })
}

/** Releases a draft: it becomes the product's active mask and the previous one is retired. */
export async function releaseMask(db: Knex, maskId: number, by: number | null): Promise<void> {
  await db.transaction(async (trx) => {
    const mask = await trx('masks').where({ id: maskId }).forUpdate().first()
    if (!mask || mask.status !== 'draft') throw new Error(`mask ${maskId} is not a draft`)
    const product = await trx('products').where({ id: mask.product_id }).forUpdate().first()
    if (product.active_mask_id) await trx('masks').where({ id: product.active_mask_id }).update({ status: 'retired', retired_at: trx.fn.now() })
    await trx('masks').where({ id: maskId }).update({ status: 'released', released_at: trx.fn.now(), released_by: by })
    await trx('products').where({ id: mask.product_id }).update({ active_mask_id: maskId, updated_at: trx.fn.now() })
  })
}
