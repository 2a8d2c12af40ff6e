/** Station changes that are audited: issuing and replacing a station's token. */
import type { Knex } from 'knex'
import { createStation as insertStation, rotateStationToken as replaceStationToken, type NewStation } from '../repos/stations'
import { recordAudit } from './audit'

/**
 * Creates a station with version 1 of its profile and audits the token issue, in one transaction.
 * Returns its id and its token (shown once).
 * @throws StationConflict for a name another station has.
 */
export async function createStation(db: Knex, s: NewStation): Promise<{ id: number; token: string }> {
  return db.transaction(async (trx) => {
    const created = await insertStation(trx, s)
    await recordAudit(trx, { userId: s.createdBy, action: 'station.token_issue', entity: 'station', entityId: created.id, subject: s.name, ip: s.ip, detail: { tokenHint: created.tokenHint } })
    return { id: created.id, token: created.token }
  })
}

/** Replaces the station's token and audits it (the hint only, never the token); undefined for an unknown station. */
export async function rotateStationToken(db: Knex, id: number, by: { userId: number | null; ip?: string | null } = { userId: null }): Promise<string | undefined> {
  return db.transaction(async (trx) => {
    const rotated = await replaceStationToken(trx, id)
    if (!rotated) return undefined
    await recordAudit(trx, { userId: by.userId, action: 'station.token_rotate', entity: 'station', entityId: id, subject: rotated.name, ip: by.ip, detail: { tokenHint: rotated.tokenHint } })
    return rotated.token
  })
}
