import { z } from 'zod'
import { decimalNumber } from './input'

/** A serial as printed on the label or read by a scanner: letters, digits and - _ . ; 3 to 64 characters. */
export const serialSchema = z
  .string({ error: 'serial is required' })
  .trim()
  .min(3, 'serial must have at least 3 characters')
  .max(64, 'serial may have at most 64 characters')
  .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'serial may hold letters, digits and - _ . only')

/** A product or lot code. */
export const codeSchema = z
  .string()
  .trim()
  .min(1)
  .max(40)
  .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, 'codes may hold letters, digits and - _ . only')

export const idParamSchema = z.object({ id: decimalNumber(z.number().int().positive()) })
export const serialParamSchema = z.object({ serial: serialSchema })
