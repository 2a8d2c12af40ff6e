import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import { rm } from 'node:fs/promises'
import type { Knex } from 'knex'
import type PgBoss from 'pg-boss'
import { AnalysisInputError, parseImpedanceTable, validateRecordingSource, MAX_TABLE_LINES, type StationProfile } from '../analysis/index.ts'
import { enqueueAnalysis } from '../queue/index.ts'
import { findRecordingByContent, findRecordingOfOtherUnit, insertRecording } from '../repos/recordings.ts'
import { getReturnRow } from '../repos/returns.ts'
import { getUnitBySerial, resolveUnit } from '../repos/units.ts'
import { newStorageKey, type RecordingStorage } from '../storage/recordings.ts'
import { sha256OfFile, withFileSource } from '../storage/file-source.ts'
import type { UploadFields } from '../../shared/utils/recordings.ts'
import { isUniqueViolation } from '../repos/pg-errors.ts'
import { getActiveMask } from '../repos/masks.ts'
import { getProductById } from '../repos/products.ts'
import { getActiveReferenceOfUnit } from '../repos/reference-units.ts'
import { tableRefusal } from './analyze.ts'
import { getStationState } from './station-checks.ts'

export const UPLOAD_REFUSAL_CODES = ['unsupported_file', 'too_large', 'station_required', 'unknown_return', 'return_closed', 'wrong_unit', 'already_uploaded', 'same_recording_other_unit', 'station_unverified'] as const satisfies readonly ErrorCode[]

/** Why an upload was refused before anything was stored (the engine's refusals are AnalysisInputError). */
export class UploadRefused extends DomainError<(typeof UPLOAD_REFUSAL_CODES)[number]> {}

export interface UploadSource {
  tempPath: string
  originalName: string
  fields: UploadFields
  /** The station the upload is for (from its token, or chosen by the signed-in user), with its current profile. */
  station: { id: number; profileId: number; profile: StationProfile } | null
  userId: number | null
  /**
   * A return test (glossary): the recording is linked to this return, in the same transaction, and
   * never counts in production yield. The serial must be the return's unit, and the return open.
   */
  returnId?: number
}

export interface UploadOutcome {
  id: number
  status: 'queued' | 'analysing' | 'done' | 'rejected' | 'failed'
  duplicate: boolean
}

/**
 * Largest impedance table taken: room for MAX_TABLE_LINES lines of 200 characters. A table is read
 * whole to be parsed; a sweep recording never is (it is validated block by block).
 */
export const MAX_TABLE_BYTES = 4 * 1024 * 1024
/** Bytes read to tell a recording from a table. */
const KIND_HEAD_BYTES = 4096

const RIFF = Buffer.from('RIFF')
const WAVE = Buffer.from('WAVE')

/** Sweep recording (RIFF) or impedance table (text); anything else is not ours to read. */
export function kindOf(bytes: Buffer): 'sweep' | 'impedance_table' {
  if (bytes.length >= 4 && bytes.subarray(0, 4).equals(RIFF)) return 'sweep'
  const head = bytes.subarray(0, 4096)
  if (head.includes(0)) {
    throw new UploadRefused('unsupported_file', 'The file is neither a WAVE recording nor a text impedance table')
  }
  if (bytes.length >= 12 && bytes.subarray(8, 12).equals(WAVE)) return 'sweep'
  return 'impedance_table'
}

/** What the engine's validation found in an uploaded file: its kind, its size, and a table's bytes. */
export interface CheckedUpload {
  kind: 'sweep' | 'impedance_table'
  size: number
  /** The impedance table (small, read whole); null for a sweep recording, which is never read whole. */
  table: Buffer | null
}

const asBuffer = (u: Uint8Array) => Buffer.from(u.buffer, u.byteOffset, u.byteLength)

/**
 * Engine validation of the uploaded file where it lies, before anything is stored: a sweep
 * recording is read block by block with the same rules as the analysis (no copy of it in memory),
 * a table is read whole and parsed.
 * @throws UploadRefused or AnalysisInputError.
 */
export async function checkUploadFile(path: string, profile: StationProfile | null): Promise<CheckedUpload> {
  return withFileSource(path, async (file) => {
    if (file.size === 0) throw new AnalysisInputError('empty_file', 'The file is empty')
    const kind = kindOf(asBuffer(await file.read(0, Math.min(file.size, KIND_HEAD_BYTES))))
    if (kind === 'sweep') {
      if (!profile) throw new UploadRefused('station_required', 'A sweep recording needs its station (its profile tells the channels and calibration)')
      await validateRecordingSource(file, profile)
      return { kind, size: file.size, table: null }
    }
    if (file.size > MAX_TABLE_BYTES) {
      throw new UploadRefused('too_large', `An impedance table is at most ${MAX_TABLE_BYTES / 1048576} MB (${MAX_TABLE_LINES} lines); this file is ${file.size} bytes`)
    }
    const table = asBuffer(await file.read(0, file.size))
    parseImpedanceTable(table.toString('utf8'))
    return { kind, size: file.size, table }
  })
}

/** Refuses, before anything is stored, an impedance table that does not cover the product's band under its released mask. */
async function refuseUncoveredTable(trx: Knex.Transaction, productId: number, bytes: Buffer): Promise<void> {
  const product = (await getProductById(trx, productId))!
  const refusal = tableRefusal(bytes.toString('utf8'), product, (await getActiveMask(trx, productId))?.limits ?? null)
  if (refusal) throw refusal
}

/** Refuses, before anything is stored, an upload from a station that is blocked (see stationState). */
async function refuseUnverifiedStation(trx: Knex.Transaction, stationId: number): Promise<void> {
  const state = await getStationState(trx, stationId)
  if (state.blocked) {
    throw new UploadRefused('station_unverified', `This station is blocked since ${state.since}. ${state.reason} An engineer can release it for a stated time.`, { since: state.since, state: state.state })
  }
}

/**
 * Accepts one upload: validates it, then in one transaction registers the unit when new, stores the
 * file, inserts the recording row (a station check when the unit is a reference unit) and enqueues its analysis. The same file for the same unit again
 * returns the earlier recording. Nothing is left behind when any step fails.
 * @throws UploadRefused or AnalysisInputError for input the product cannot take.
 */
export async function acceptUpload(db: Knex, storage: RecordingStorage, boss: PgBoss, src: UploadSource): Promise<UploadOutcome> {
  try {
    const { kind, size, table } = await checkUploadFile(src.tempPath, src.station?.profile ?? null)
    const sha256 = await sha256OfFile(src.tempPath)
    const { serial, product, lot, ambientC, note } = src.fields
    const key = newStorageKey(sha256, kind)
    let stored = false
    try {
      return await db.transaction(async (trx) => {
        // A return test: the return stays open (locked) until its recording row is in.
        const ret = src.returnId === undefined ? undefined : await getReturnRow(trx, src.returnId, { forUpdate: true })
        if (src.returnId !== undefined && !ret) throw new UploadRefused('unknown_return', `No return ${src.returnId}`)
        if (ret && ret.status !== 'open') throw new UploadRefused('return_closed', `Return ${ret.id} is closed: nothing can be added to it`)
        const unit = await resolveUnit(trx, serial, product, lot)
        if (table) await refuseUncoveredTable(trx, Number(unit.product_id), table)
        if (ret && Number(unit.id) !== ret.unitId) {
          throw new UploadRefused('wrong_unit', `Return ${ret.id} is for unit ${ret.serial}, not ${serial}`)
        }
        const earlier = await findRecordingByContent(trx, Number(unit.id), sha256)
        if (earlier && ret && Number(earlier.return_id) !== ret.id) {
          throw new UploadRefused('already_uploaded', `This exact file was already uploaded for unit ${ret.serial}${earlier.is_return_test ? ' as a return test' : ' as its factory test'}: record the returned unit anew`)
        }
        if (earlier) return { id: Number(earlier.id), status: earlier.status, duplicate: true }
        const elsewhere = await findRecordingOfOtherUnit(trx, Number(unit.id), sha256)
        if (elsewhere) {
          throw new UploadRefused('same_recording_other_unit', `This exact file was already uploaded for unit ${elsewhere.serial}: a station must record each unit anew`)
        }
        // A reference unit measured again is a station check: it never counts in production.
        const stationCheck = !ret && (await getActiveReferenceOfUnit(trx, Number(unit.id))) !== undefined
        // A station due for its check (or whose check failed) measures nothing but a reference unit.
        if (src.station && !stationCheck && !ret) await refuseUnverifiedStation(trx, src.station.id)
        const id = await insertRecording(trx, {
          unitId: Number(unit.id),
          stationId: src.station?.id ?? null,
          stationProfileId: src.station?.profileId ?? null,
          uploadedBy: src.userId,
          kind,
          originalName: src.originalName.slice(0, 255),
          byteSize: size,
          sha256,
          storageKey: key,
          ambientC: ambientC ?? null,
          note: note ?? null,
          returnId: ret?.id ?? null,
          stationCheck,
        })
        await storage.putFile(key, src.tempPath)
        stored = true
        await enqueueAnalysis(boss, trx, id)
        return { id, status: 'queued' as const, duplicate: false }
      })
    } catch (err) {
      if (stored) await storage.remove(key)
      if (isUniqueViolation(err)) {
        // A concurrent retry of the same file won the race: answer with its recording.
        const unit = await getUnitBySerial(db, serial)
        const earlier = unit && (await findRecordingByContent(db, Number(unit.id), sha256))
        if (earlier) return { id: Number(earlier.id), status: earlier.status, duplicate: true }
      }
      throw err
    }
  } finally {
    await rm(src.tempPath, { force: true })
  }
}
