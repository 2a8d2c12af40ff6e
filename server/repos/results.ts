import type { Knex } from 'knex'
import type { AnalysisResult } from '../analysis/index.ts'
import type { Judgement } from '../verdict/judge.ts'

export interface NewResult {
  recordingId: number
  unitId: number
  analysis: AnalysisResult
  judgement: Judgement | null
  maskId: number | null
}

const CURVE_DIGITS = 5

/** float4 arrays hold about 7 digits; rounding first keeps the JSON small too. */
function compact(a: (number | null)[] | null): (number | null)[] | null {
  return a ? a.map((v) => (v === null || !Number.isFinite(v) ? null : Number(v.toPrecision(CURVE_DIGITS)))) : null
}

/** Stores one analysed recording as a result and marks the recording done, in one transaction. Idempotent per recording. */
export async function saveResult(db: Knex, r: NewResult): Promise<number> {
  const { analysis: a, judgement: j } = r
  const p = a.parameters
  return db.transaction(async (trx) => {
    const inserted = await trx('results')
      .insert({
        recording_id: r.recordingId,
        unit_id: r.unitId,
        kind: a.kind,
        mask_id: j ? r.maskId : null,
        verdict: j?.verdict ?? null,
        checks: j ? JSON.stringify({ checks: j.checks, unmeasured: j.unmeasured }) : null,
        judged_at: j ? trx.fn.now() : null,
        re_ohm: p.reOhm,
        re20_ohm: p.re20Ohm,
        ambient_c: p.ambientC,
        fs_hz: p.fsHz,
        qms: p.qms,
        qes: p.qes,
        qts: p.qts,
        le_mh: p.leMh,
        zmax_ohm: p.zmaxOhm,
        zmin_ohm: p.zminOhm,
        sensitivity_db: p.sensitivityDb,
        thd_pct: p.thdPct,
        thd_max_pct: p.thdMaxPct,
        rub_buzz_db: p.rubBuzzDb,
        fit_error_pct: p.fitErrorPct,
        polarity: a.flags.polarity,
        open_coil: a.flags.openCoil,
        shorted_coil: a.flags.shortedCoil,
        flags: JSON.stringify(a.flags),
        parameters: JSON.stringify({ ...p, unmeasured: a.unmeasured, notes: a.notes, thdAt: a.thdAt }),
        classical: a.classical ? JSON.stringify(a.classical) : null,
        curve_freq_hz: compact(a.curves.freqHz),
        curve_spl_db: compact(a.curves.splDb),
        curve_spl_phase_deg: compact(a.curves.splPhaseDeg),
        curve_impedance_ohm: compact(a.curves.impedanceOhm),
        curve_impedance_phase_deg: compact(a.curves.impedancePhaseDeg),
        curve_thd_pct: compact(a.curves.thdPct),
        engine_version: a.engineVersion,
        timings_ms: JSON.stringify(a.timingsMs),
      })
      .onConflict('recording_id')
      .ignore()
      .returning('id')
    await trx('recordings').where({ id: r.recordingId }).update({ status: 'done', error_code: null, error_message: null, finished_at: trx.fn.now() })
    if (inserted.length) return Number(inserted[0].id)
    return Number((await trx('results').where({ recording_id: r.recordingId }).first('id')).id)
  })
}
