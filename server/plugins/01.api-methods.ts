import { loggablePath } from '../utils/errors'

/**
 * A request under /api/ reaches the page renderer only when its path has a route but not for this
 * method (any other /api path is answered by server/api/[...path].ts), or when it is /api itself:
 * h3 then falls back to the broadest route, the pages. An API client gets 405 `method_not_allowed`
 * (or 404 `not_found` for /api) as JSON instead of a page or a redirect to sign-in.
 */
export default defineNitroPlugin((nitro) => {
  nitro.hooks.hook('render:before', ({ event }) => {
    const path = event.path.split('?')[0]!
    if (path === '/api' || path === '/api/') throw new DomainError('not_found', 'No API route here: see the README, "Station API"')
    if (path.startsWith('/api/')) throw new DomainError('method_not_allowed', `${event.method} is not served at ${loggablePath(path)}`)
  })
})
