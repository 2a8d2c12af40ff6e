// access: public (answers any /api path that no route serves, whoever asks, so that a station or a
// script gets a JSON 404 with a code instead of the application's HTML page; every method, hence
// no method suffix)
import { loggablePath } from '../utils/errors'

export default defineEventHandler((event) => {
  throw new DomainError('not_found', `No API route ${event.method} ${loggablePath(event.path)}`)
})
