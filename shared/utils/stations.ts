import { z } from 'zod'
import { plainText } from './input'

/** POST /api/stations and PATCH /api/stations/:id (the route checks the profile itself with stationProfileSchema). */
export const stationCreateSchema = z.object({
  name: plainText().trim().min(1, 'name is required').max(80),
  line: plainText().trim().max(80).default(''),
  profile: z.record(z.string(), z.unknown()).default({}),
})
export const stationPatchSchema = z
  .object({
    name: plainText().trim().min(1).max(80).optional(),
    line: plainText().trim().max(80).optional(),
    active: z.boolean().optional(),
    profile: z.record(z.string(), z.unknown()).optional(),
  })
  .refine((p) => Object.keys(p).length > 0, { message: 'nothing to change' })
