import { guardRequestOrigin } from '../utils/request-origin'
import { ownOrigins } from '../utils/auth'

/**
 * Every state-changing /api request from a browser must come from our own origin, with a JSON body
 * (or multipart on an upload route): 403 `cross_origin`, 415 `unsupported_media_type` otherwise
 * (server/utils/request-origin.ts says why and what passes). Numbered so it runs before any route.
 */
export default defineEventHandler((event) => {
  guardRequestOrigin(event, ownOrigins)
})
