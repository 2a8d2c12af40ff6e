import type { H3Event } from 'h3'
import type { User } from '#auth-utils'
import { getStationByToken, type StationSummary } from '../repos/stations'
import type { Role } from '../../shared/utils/roles'
import { useDb } from './db'
import { httpError } from './errors'

export type Caller = { kind: 'user'; user: User } | { kind: 'station'; station: StationSummary }

/**
 * Who is calling: a station with `Authorization: Bearer <token>`, or a signed-in person of one of `roles`.
 * @throws 401 `invalid_token` for a bearer token that matches no active station; otherwise as requireRole.
 */
export async function requireUserOrStation(event: H3Event, ...roles: Role[]): Promise<Caller> {
  const auth = getHeader(event, 'authorization')
  if (auth?.toLowerCase().startsWith('bearer ')) {
    const station = await getStationByToken(useDb(), auth.slice(7).trim())
    if (!station) throw httpError(401, 'invalid_token', 'This station token is not valid (revoked or mistyped)')
    return { kind: 'station', station }
  }
  return { kind: 'user', user: await requireRole(event, ...roles) }
}
