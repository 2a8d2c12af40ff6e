/** Products as the routes see them: one call each, a product named in the path that does not exist is `product_not_found`. */
import type { Knex } from 'knex'
import type { ProductListItem } from '../../shared/utils/product'
import type { AlertingInput, AlertingView } from '../../shared/utils/alerts'
import { DomainError } from '../../shared/utils/domain-error'
import { createProduct, getProductByCode, getProductById, updateProduct, type NewProduct, type ProductChanges } from '../repos/products'
import { getAlerting, setAlerting } from './alerts'

/** @throws DomainError `product_not_found`. */
export async function getProduct(db: Knex, code: string): Promise<ProductListItem> {
  const product = await getProductByCode(db, code)
  if (!product) throw new DomainError('product_not_found', `No product ${code}`)
  return product
}

/** Adds a product. @throws ProductConflict `duplicate_product`. */
export async function addProduct(db: Knex, p: NewProduct): Promise<ProductListItem> {
  return (await getProductById(db, await createProduct(db, p)))!
}

/** @throws DomainError `product_not_found`; ProductConflict `product_in_use`, `duplicate_product`. */
export async function editProduct(db: Knex, code: string, changes: ProductChanges): Promise<ProductListItem> {
  const product = await updateProduct(db, code, changes)
  if (!product) throw new DomainError('product_not_found', `No product ${code}`)
  return product
}

/** A product's alert rules and subscribers. @throws DomainError `product_not_found`. */
export async function getProductAlerting(db: Knex, code: string): Promise<AlertingView> {
  return getAlerting(db, (await getProduct(db, code)).id)
}

/** Replaces a product's alert rules and subscribers. @throws DomainError `product_not_found`. */
export async function setProductAlerting(db: Knex, code: string, input: AlertingInput, by: number | null): Promise<AlertingView> {
  return setAlerting(db, (await getProduct(db, code)).id, input, by)
}
