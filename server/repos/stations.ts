import { DomainError } from '../../shared/utils/domain-error.ts'
import { createHash, randomBytes } from 'node:crypto'
import type { Knex } from 'knex'
import type { StationProfile } from '../analysis/index.ts'
import type { StationView } from '../../shared/types/api.ts'
import { isUniqueViolation } from './pg-errors.ts'

const TOKEN_PREFIX = 'ctst_'

/** A new station token: shown once, stored only as its SHA-256 (it is 256 random bits, so no slow hash is needed). */
export function newStationToken(): { token: string; hash: string; hint: string } {
  const token = TOKEN_PREFIX + randomBytes(32).toString('base64url')
  return { token, hash: hashToken(token), hint: token.slice(0, TOKEN_PREFIX.length + 4) + '…' }
}

export function hashToken(token: string): string {
  return createHash('sha256').update(token).digest('hex')
}

const currentProfile = (db: Knex) =>
  db('station_profiles as p')
    .distinctOn('p.station_id')
    .select('p.station_id', 'p.id as profile_id', 'p.version', 'p.profile')
    .orderBy([{ column: 'p.station_id' }, { column: 'p.version', order: 'desc' }])
    .as('cp')

interface StationJoinRow {
  id: string
  name: string
  line: string
  active: boolean
  token_hint: string
  profile_id: string
  version: number
  profile: StationProfile
  last_upload_at: Date | null
}

function toStation(r: StationJoinRow): StationView {
  return {
    id: Number(r.id),
    name: r.name,
    line: r.line,
    active: r.active,
    tokenHint: r.token_hint,
    profileId: Number(r.profile_id),
    profileVersion: r.version,
    profile: r.profile,
    lastUploadAt: r.last_upload_at ? r.last_upload_at.toISOString() : null,
  }
}

function stationsQuery(db: Knex) {
  // The latest upload through the (station_id, uploaded_at) index: one probe per station.
  const lastUpload = db('recordings as r').where('r.station_id', db.ref('s.id')).max('r.uploaded_at').as('last_upload_at')
  return db('stations as s').join(currentProfile(db), 'cp.station_id', 's.id').select('s.id', 's.name', 's.line', 's.active', 's.token_hint', 'cp.profile_id', 'cp.version', 'cp.profile', lastUpload)
}

export async function listStations(db: Knex): Promise<StationView[]> {
  return (await stationsQuery(db).orderBy('s.name')).map(toStation)
}

export async function getStation(db: Knex, id: number): Promise<StationView | undefined> {
  const r = await stationsQuery(db).where('s.id', id).first()
  return r && toStation(r)
}

/** The active station whose token this is, or undefined. */
export async function getStationByToken(db: Knex, token: string): Promise<StationView | undefined> {
  const r = await stationsQuery(db).where({ 's.token_hash': hashToken(token), 's.active': true }).first()
  return r && toStation(r)
}

export async function getProfileVersion(db: Knex, profileId: number): Promise<StationProfile | undefined> {
  const r = await db('station_profiles').where({ id: profileId }).first()
  return r?.profile
}

export interface NewStation {
  name: string
  line: string
  profile: StationProfile
  createdBy: number | null
  /** The caller's address, for the audit log. */
  ip?: string | null
}

/**
 * Creates a station with version 1 of its profile. Returns its id, its token (shown once) and the
 * token's hint (for the audit log).
 * @throws StationConflict for a name another station has.
 */
export async function createStation(db: Knex, s: NewStation): Promise<{ id: number; token: string; tokenHint: string }> {
  const t = newStationToken()
  return guardName(s.name, () =>
    db.transaction(async (trx) => {
      const [row] = await trx('stations').insert({ name: s.name, line: s.line, token_hash: t.hash, token_hint: t.hint }).returning('id')
      await trx('station_profiles').insert({ station_id: row.id, version: 1, profile: JSON.stringify(s.profile), created_by: s.createdBy })
      return { id: Number(row.id), token: t.token, tokenHint: t.hint }
    }),
  )
}

/** Another station already has this name. */
export class StationConflict extends DomainError<'duplicate_station'> {
  constructor(message: string) {
    super('duplicate_station', message)
  }
}

async function guardName<T>(name: string | undefined, work: () => Promise<T>): Promise<T> {
  try {
    return await work()
  } catch (err) {
    if (isUniqueViolation(err)) throw new StationConflict(`A station named ${name} exists`)
    throw err
  }
}

/** A partial profile edit applied to the current profile (the sweep merged field by field), so unnamed fields keep their calibration. */
export function mergeProfile(current: StationProfile, patch: Record<string, unknown>): Record<string, unknown> {
  const sweep = patch.sweep && typeof patch.sweep === 'object' ? { ...current.sweep, ...(patch.sweep as object) } : current.sweep
  return { ...current, ...patch, sweep }
}

export interface StationPatch {
  name?: string
  line?: string
  active?: boolean
  /** The new profile computed from the current one (called inside the transaction). */
  profile?: (current: StationProfile) => StationProfile
}

/**
 * Edits a station; a changed profile becomes a new version (results keep the version they used).
 * @throws StationConflict for a name another station has.
 */
export async function updateStation(db: Knex, id: number, patch: StationPatch, by: number | null): Promise<StationView | undefined> {
  return guardName(patch.name, () =>
    db.transaction(async (trx) => {
      const station = await trx('stations').where({ id }).forUpdate().first()
      if (!station) return undefined
      const fields = Object.fromEntries(Object.entries({ name: patch.name, line: patch.line, active: patch.active }).filter(([, v]) => v !== undefined))
      if (Object.keys(fields).length) await trx('stations').where({ id }).update({ ...fields, updated_at: trx.fn.now() })
      if (patch.profile) {
        const current = (await getStation(trx, id))!
        const { max } = (await trx('station_profiles').where({ station_id: id }).max<{ max: number }>('version as max').first())!
        await trx('station_profiles').insert({ station_id: id, version: max + 1, profile: JSON.stringify(patch.profile(current.profile)), created_by: by })
      }
      return getStation(trx, id)
    }),
  )
}

/**
 * Replaces the station's token; the old one stops working at once (only the new hash is kept).
 * Returns the new token, its hint and the station's name; undefined for an unknown station.
 */
export async function rotateStationToken(db: Knex, id: number): Promise<{ token: string; tokenHint: string; name: string } | undefined> {
  const t = newStationToken()
  const [row] = await db('stations').where({ id }).update({ token_hash: t.hash, token_hint: t.hint, updated_at: db.fn.now() }).returning(['name'])
  return row ? { token: t.token, tokenHint: t.hint, name: row.name } : undefined
}

/** The station profiles the given recordings were analysed with. */
export async function listProfilesOfRecordings(db: Knex, recordingIds: number[]): Promise<StationProfile[]> {
  const rows = await db('recordings as r').join('station_profiles as sp', 'sp.id', 'r.station_profile_id').whereIn('r.id', recordingIds).select('sp.profile')
  return rows.map((r: { profile: StationProfile }) => r.profile)
}
