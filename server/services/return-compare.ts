import type { Knex } from 'knex'
import type { RecordingView } from '../../shared/types/api.ts'
import type { CompareFigures, CompareTestRef, ReturnComparison } from '../../shared/types/returns.ts'
import { RETURN_READINGS_NOTE, returnDeltaRows, returnReadings } from '../../shared/utils/returns.ts'
import { getRecordingView } from '../repos/recordings.ts'
import { getReturnRow, latestFactoryRecordingId, latestReturnTestRecordingId, listReturnTests } from '../repos/returns.ts'
import { ReturnError } from './returns.ts'

const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null)

/** The figures the comparison reads from one result: Re at 20 °C (raw Re without an ambient) and THD max as judged, like the lot report. */
export function compareFiguresOf(v: RecordingView): CompareFigures {
  const p = v.parameters
  const thdChecked = v.checks.find((c) => c.name === 'thdMaxPct')?.value
  return {
    fsHz: num(p?.fsHz),
    re20Ohm: num(p?.re20Ohm) ?? num(p?.reOhm),
    qts: num(p?.qts),
    qms: num(p?.qms),
    qes: num(p?.qes),
    sensitivityDb: num(p?.sensitivityDb),
    thdMaxPct: num(thdChecked) ?? num(p?.thdMaxPct),
    rubBuzzDb: num(p?.rubBuzzDb),
    polarity: v.flags?.polarity ?? null,
    openCoil: v.flags?.openCoil ?? false,
    shortedCoil: v.flags?.shortedCoil ?? false,
  }
}

const refOf = (v: RecordingView): CompareTestRef => ({ recordingId: v.id, uploadedAt: v.uploadedAt, verdict: v.verdict, maskVersion: v.maskVersion, stationId: v.stationId })

/** Both curves on the shorter of the two grids (the grid is the same from 10 Hz; its top follows each sweep). */
function overlay(f: RecordingView, r: RecordingView): ReturnComparison['curves'] {
  const fc = f.curves
  const rc = r.curves
  if (!fc || !rc) return null
  const n = Math.min(fc.freqHz.length, rc.freqHz.length)
  const cut = <T>(a: T[] | null): T[] | null => (a ? a.slice(0, n) : null)
  return {
    freqHz: fc.freqHz.slice(0, n),
    factorySplDb: cut(fc.splDb),
    returnSplDb: cut(rc.splDb),
    factoryImpedanceOhm: cut(fc.impedanceOhm),
    returnImpedanceOhm: cut(rc.impedanceOhm),
    maskSplDb: rc.maskSplDb,
  }
}

/**
 * The comparison of a returned unit with its factory test: the latest production test with a
 * result (never a return test) against the return's latest analysed return test; the delta table,
 * plain-language readings (trade practice) and both curves overlaid.
 * @throws ReturnError `unknown_return`.
 */
export async function compareReturn(db: Knex, returnId: number): Promise<ReturnComparison> {
  const ret = await getReturnRow(db, returnId)
  if (!ret) throw new ReturnError('unknown_return', `No return ${returnId}`)
  const [factoryId, returnTestId, tests] = await Promise.all([latestFactoryRecordingId(db, ret.unitId), latestReturnTestRecordingId(db, returnId), listReturnTests(db, returnId)])
  const [factory, returned] = await Promise.all([
    factoryId === null ? undefined : getRecordingView(db, factoryId, { curves: true }),
    returnTestId === null ? undefined : getRecordingView(db, returnTestId, { curves: true }),
  ])
  const base: ReturnComparison = {
    returnId,
    serial: ret.serial,
    factory: factory ? refOf(factory) : null,
    returnTest: returned ? refOf(returned) : null,
    pending: tests.some((t) => t.status === 'queued' || t.status === 'analysing'),
    polarity: { factory: factory?.flags?.polarity ?? null, returned: returned?.flags?.polarity ?? null },
    rows: [],
    readings: [],
    curves: null,
    note: RETURN_READINGS_NOTE,
  }
  if (!factory || !returned) return base
  const f = compareFiguresOf(factory)
  const r = compareFiguresOf(returned)
  return { ...base, rows: returnDeltaRows(f, r), readings: returnReadings(f, r), curves: overlay(factory, returned) }
}
