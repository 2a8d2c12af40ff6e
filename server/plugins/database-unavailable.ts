import { isDatabaseUnavailable } from '../utils/db'
import { RETRY_AFTER_S } from '../utils/errors'

/**
 * Any request whose error comes from an unreachable database (PostgreSQL restarting, refusing
 * connections) answers 503 `database_unavailable` with Retry-After, not 500: guards and routes
 * that do not go through the error mapper are covered too. Nitro calls this hook synchronously
 * before it renders the error, so changing the error here changes the answer.
 */
export default defineNitroPlugin((nitro) => {
  nitro.hooks.hook('error', (error, { event }) => {
    const h3 = error as { statusCode?: number; cause?: unknown; unhandled?: boolean; statusMessage?: string; message: string; data?: unknown }
    if (!event || (h3.statusCode ?? 500) < 500 || h3.statusCode === 503) return
    if (!isDatabaseUnavailable(h3.cause ?? error)) return
    h3.statusCode = 503
    h3.statusMessage = 'Service Unavailable'
    h3.message = 'The database is not reachable right now; try again in a few seconds'
    h3.data = { code: 'database_unavailable', retryAfterS: RETRY_AFTER_S }
    h3.unhandled = false
    setResponseHeader(event, 'retry-after', RETRY_AFTER_S)
  })
})
