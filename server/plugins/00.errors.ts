import type { H3Error } from 'h3'
import { shapeErrorAnswer } from '../utils/errors'

/**
 * The one place an error becomes an HTTP answer (server/utils/errors.ts, errorAnswer): routes,
 * guards and services throw domain errors with a code, this hook answers each with its code's
 * status and `{ statusCode, message, data: { code, ...details } }`. Numbered so it runs first.
 */
export default defineNitroPlugin((nitro) => {
  nitro.hooks.hook('error', (error, { event }) => {
    if (event) shapeErrorAnswer(error as H3Error, event)
  })
})
