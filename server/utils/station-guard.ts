import type { H3Event } from 'h3'
import type { User } from '#auth-utils'
import { getStation, getStationByToken } from '../repos/stations'
import type { StationView } from '../../shared/types/api'
import type { UploadSource } from '../services/ingest'
import type { Role } from '../../shared/utils/roles'
import { useDb } from './db'
import { DomainError } from '../../shared/utils/domain-error'

export type Caller = { kind: 'user'; user: User } | { kind: 'station'; station: StationView }

/**
 * Who is calling: a station with `Authorization: Bearer <token>`, or a signed-in person of one of `roles`.
 * @throws 401 `invalid_token` for a bearer token that matches no active station; otherwise as requireRole.
 */
export async function requireUserOrStation(event: H3Event, ...roles: Role[]): Promise<Caller> {
  const auth = getHeader(event, 'authorization')
  if (auth?.toLowerCase().startsWith('bearer ')) {
    const station = await getStationByToken(useDb(), auth.slice(7).trim())
    if (!station) throw new DomainError('invalid_token', 'This station token is not valid (revoked or mistyped)')
    return { kind: 'station', station }
  }
  return { kind: 'user', user: await requireRole(event, ...roles) }
}

/** A station as the ingest service takes it: its id, current profile and that profile's id. */
export function uploadStation(station: StationView | undefined): UploadSource['station'] {
  return station ? { id: station.id, profileId: station.profileId, profile: station.profile } : null
}

/**
 * The station a signed-in person chose for an upload (none chosen: undefined).
 * @throws 422 `unknown_station` when it does not exist or is retired.
 */
export async function chosenStation(id: number | undefined): Promise<StationView | undefined> {
  if (id === undefined) return undefined
  const station = await getStation(useDb(), id)
  if (!station?.active) throw new DomainError('unknown_station', `No active station with id ${id}`)
  return station
}
