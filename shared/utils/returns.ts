import { z } from 'zod'
import { decimalNumber, plainText } from './input'
import { uploadFieldsSchema } from './recordings'
import { normalizeSerialQuery } from './units'
import type { CompareFigure, CompareFigures, CompareReading, DeltaRow, Disposition } from '../types/returns'

/**
 * Returns: input schemas shared by the forms and the routes, and the comparison of a returned unit
 * with its factory test. The comparison's thresholds and readings are trade practice (rules of
 * thumb of loudspeaker repair and quality desks, "common practice"), not a diagnosis: the UI says so.
 */

export const RETURN_DISPOSITIONS = ['no_fault_found', 'confirmed_defect', 'damaged_in_use', 'other'] as const satisfies readonly Disposition[]

export const RETURN_DISPOSITION_LABELS: Record<Disposition, string> = {
  no_fault_found: 'No fault found',
  confirmed_defect: 'Confirmed defect',
  damaged_in_use: 'Damaged in use',
  other: 'Other',
}

/** Largest attachment (CONETRAIL_MAX_ATTACHMENT_MB may lower or raise it on the server). */
export const RETURN_ATTACHMENT_MAX_MB = 10
export const RETURN_ATTACHMENT_TYPES = ['image/png', 'image/jpeg', 'application/pdf'] as const
/** The file extensions of each attachment type, the usual one first (the stored key and a download take it). */
export const RETURN_ATTACHMENT_EXTENSIONS: Record<(typeof RETURN_ATTACHMENT_TYPES)[number], readonly string[]> = {
  'image/png': ['png'],
  'image/jpeg': ['jpg', 'jpeg'],
  'application/pdf': ['pdf'],
}

/** The earliest date a return may have been received: older dates are typing mistakes. */
export const RETURN_EARLIEST_RECEIVED_ON = '2000-01-01'

/**
 * The latest date a return may have been received, as YYYY-MM-DD: one day after `now`'s UTC date,
 * because a desk east of UTC is already on the next day while the server's UTC clock is not.
 */
export function latestReceivedOn(now: Date = new Date()): string {
  return new Date(Date.UTC(now.getUTCFullYear(), now.getUTCMonth(), now.getUTCDate() + 1)).toISOString().slice(0, 10)
}

/** Why a date received (YYYY-MM-DD) cannot be right, in the future or before 2000, or null when it may be. */
export function receivedOnProblem(date: string, now: Date = new Date()): { code: 'received_in_future' | 'received_too_early'; message: string } | null {
  if (date < RETURN_EARLIEST_RECEIVED_ON) return { code: 'received_too_early', message: `The date received ${date} is before ${RETURN_EARLIEST_RECEIVED_ON.slice(0, 4)}: check the year` }
  if (date > latestReceivedOn(now)) return { code: 'received_in_future', message: `The date received ${date} is in the future: a return is registered once it has arrived` }
  return null
}

const isoDate = z.iso.date({ error: 'receivedOn must be a date (YYYY-MM-DD)' })

/** POST /api/returns. */
export const returnCreateSchema = z.object({
  // Read like the search box reads it (spaces, a scanner's control and start/stop characters cut off).
  serial: z
    .string({ error: 'serial is required' })
    .max(200, 'serial is too long')
    .transform((raw, ctx) => {
      const s = normalizeSerialQuery(raw)
      if (s === null) ctx.addIssue({ code: 'custom', message: 'serial may hold letters, digits and - _ . only' })
      else if (s.length < 3) ctx.addIssue({ code: 'custom', message: 'serial must have at least 3 characters' })
      else if (s.length > 64) ctx.addIssue({ code: 'custom', message: 'serial may have at most 64 characters' })
      else return s
      return z.NEVER
    }),
  receivedOn: isoDate,
  customerRef: plainText().trim().max(120).default(''),
  categoryId: decimalNumber(z.number({ error: 'choose a complaint category' }).int().positive('choose a complaint category')),
  complaint: plainText().trim().max(4000).default(''),
})
export type ReturnCreateInput = z.infer<typeof returnCreateSchema>

/** PATCH /api/returns/:id (open returns only). */
export const returnPatchSchema = z
  .object({
    receivedOn: isoDate.optional(),
    customerRef: plainText().trim().max(120).optional(),
    categoryId: decimalNumber(z.number().int().positive().optional()),
    complaint: plainText().trim().max(4000).optional(),
  })
  .refine((p) => Object.keys(p).length > 0, { message: 'nothing to change' })
export type ReturnPatchInput = z.infer<typeof returnPatchSchema>

/**
 * POST /api/returns/:id/close. The disposition is optional here so that its absence answers with
 * its own code (422 `disposition_required`) rather than a generic invalid input.
 */
export const returnCloseSchema = z.object({
  disposition: z.enum(RETURN_DISPOSITIONS).optional(),
  cause: plainText().trim().max(500).optional(),
  causeClass: plainText().trim().min(1).max(60).optional(),
  note: plainText().trim().max(2000).optional(),
})
export type ReturnCloseInput = z.infer<typeof returnCloseSchema>

export const returnListQuerySchema = z.object({
  status: z.enum(['open', 'closed', 'all']).default('all'),
  serial: plainText().trim().max(64).optional(),
  limit: decimalNumber(z.number().int().min(1).max(500).default(200)),
})

export const returnAttachmentParamSchema = z.object({ id: decimalNumber(z.number().int().positive()), attachmentId: decimalNumber(z.number().int().positive()) })

/** The multipart fields of POST /api/returns/:id/retest; the serial is the return's own. */
export const returnRetestFieldsSchema = uploadFieldsSchema.pick({ station: true, ambientC: true, note: true }).extend({
  serial: plainText().trim().max(64).optional(),
})

export const returnCategoryCreateSchema = z.object({
  // A blank label is refused by the service with its own code (400 `label_required`).
  label: plainText().trim().max(80, 'A category name has at most 80 characters').default(''),
  sortOrder: decimalNumber(z.number().int().min(0).max(100000).optional()),
})
export const returnCategoryPatchSchema = z
  .object({
    label: plainText().trim().max(80, 'A category name has at most 80 characters').optional(),
    active: z.boolean().optional(),
    sortOrder: decimalNumber(z.number().int().min(0).max(100000).optional()),
  })
  .refine((p) => Object.keys(p).length > 0, { message: 'nothing to change' })
export const returnCategoryQuerySchema = z.object({ all: z.enum(['0', '1']).default('0') })

// ---- Comparison thresholds (common practice: rules of thumb, not from a standard) ----

/** Fs moved more than this, %: well beyond a production line's spread of a few %. Common practice. */
export const RETURN_FS_SHIFT_PCT = 10
/** Qms fell more than this, %: the suspension lost stiffness or gained losses. Common practice. */
export const RETURN_QMS_DROP_PCT = 15
/** Qts or Qes moved more than this, % (shown as significant in the table). Common practice. */
export const RETURN_Q_SHIFT_PCT = 15
/** Re at 20 °C moved more than this, %: a healthy coil keeps its resistance within about 1–2 %. Common practice. */
export const RETURN_RE_SHIFT_PCT = 5
/** Re this many times the factory value reads as an open coil even when the engine did not flag one. Common practice. */
export const RETURN_RE_OPEN_FACTOR = 10
/** Sensitivity fell more than this, dB: audible and beyond a line's spread of about ±1 dB. Common practice. */
export const RETURN_SENS_DROP_DB = 1.5
/** THD max at least doubled and rose by at least this many percentage points. Common practice. */
export const RETURN_THD_RISE_FACTOR = 2
export const RETURN_THD_MIN_RISE_PCT = 0.5
/** Rub and buzz above the engine's default limit (README, "Rub and buzz"), or risen by this much, dB. Common practice. */
export const RETURN_RUB_BUZZ_LIMIT_DB = -50
export const RETURN_RUB_BUZZ_RISE_DB = 10

export const RETURN_READINGS_NOTE = 'Readings are trade practice (common practice of repair and quality desks), not a diagnosis: confirm by inspecting the unit.'

const FIGURES: { figure: CompareFigure; label: string; unit: string; kind: DeltaRow['changeKind']; decimals: number }[] = [
  { figure: 'fsHz', label: 'Fs', unit: 'Hz', kind: 'pct', decimals: 1 },
  { figure: 're20Ohm', label: 'Re at 20 °C', unit: 'Ω', kind: 'pct', decimals: 2 },
  { figure: 'qts', label: 'Qts', unit: '', kind: 'pct', decimals: 3 },
  { figure: 'qms', label: 'Qms', unit: '', kind: 'pct', decimals: 2 },
  { figure: 'qes', label: 'Qes', unit: '', kind: 'pct', decimals: 3 },
  { figure: 'sensitivityDb', label: 'Sensitivity', unit: 'dB SPL', kind: 'db', decimals: 1 },
  { figure: 'thdMaxPct', label: 'THD max', unit: '%', kind: 'points', decimals: 2 },
  { figure: 'rubBuzzDb', label: 'Rub and buzz', unit: 'dB', kind: 'db', decimals: 1 },
]

/** Decimals of a change in %. */
const PCT_DECIMALS = 1

/**
 * A number rounded to `decimals` and written with its sign ("+1.2", "-0.35"); what rounds to zero
 * is "0.0" without a sign (never "-0.0"). A dash when missing.
 */
export function signedFigure(v: number | null, decimals: number): string {
  if (!finite(v)) return '–'
  const text = Math.abs(v).toFixed(decimals)
  if (Number(text) === 0) return text
  return `${v > 0 ? '+' : '-'}${text}`
}

/** A figure's value as the delta table shows it, with the figure's decimals. */
export function deltaValueText(row: DeltaRow, v: number | null): string {
  return finite(v) ? (Number(v.toFixed(row.decimals)) === 0 ? (0).toFixed(row.decimals) : v.toFixed(row.decimals)) : '–'
}

/** The change as it reads for the figure: "-20.0 %" (Fs, Re, Q's), "+1.2 dB" (dB figures), "+0.80 pp" (THD, percentage points). */
export function deltaChangeText(row: DeltaRow): string {
  switch (row.changeKind) {
    case 'pct':
      return row.changePct === null ? '–' : `${signedFigure(row.changePct, PCT_DECIMALS)} %`
    case 'db':
      return row.change === null ? '–' : `${signedFigure(row.change, row.decimals)} dB`
    case 'points':
      return row.change === null ? '–' : `${signedFigure(row.change, row.decimals)} pp`
  }
}

const finite = (v: number | null | undefined): v is number => typeof v === 'number' && Number.isFinite(v)

/** Change in % of the value (null when the factory value is 0 or missing). */
function pctOf(factory: number | null, returned: number | null): number | null {
  if (!finite(factory) || !finite(returned) || factory === 0) return null
  return ((returned - factory) / Math.abs(factory)) * 100
}

function isSignificant(figure: CompareFigure, f: number | null, r: number | null, pct: number | null): boolean {
  if (!finite(f) || !finite(r)) return false
  switch (figure) {
    case 'fsHz':
      return Math.abs(pct ?? 0) > RETURN_FS_SHIFT_PCT
    case 're20Ohm':
      return Math.abs(pct ?? 0) > RETURN_RE_SHIFT_PCT
    case 'qms':
      return (pct ?? 0) < -RETURN_QMS_DROP_PCT || Math.abs(pct ?? 0) > RETURN_Q_SHIFT_PCT
    case 'qts':
    case 'qes':
      return Math.abs(pct ?? 0) > RETURN_Q_SHIFT_PCT
    case 'sensitivityDb':
      return r - f < -RETURN_SENS_DROP_DB
    case 'thdMaxPct':
      return r >= f * RETURN_THD_RISE_FACTOR && r - f >= RETURN_THD_MIN_RISE_PCT
    case 'rubBuzzDb':
      return r > RETURN_RUB_BUZZ_LIMIT_DB && (f <= RETURN_RUB_BUZZ_LIMIT_DB || r - f >= RETURN_RUB_BUZZ_RISE_DB)
  }
}

/**
 * The delta table: each figure's factory and return values, change, and change in % of the value
 * for the figures where a % means something (not for dB figures, whose change is already a ratio,
 * nor THD, itself a %: those read in dB and in percentage points).
 */
export function returnDeltaRows(factory: CompareFigures, returned: CompareFigures): DeltaRow[] {
  return FIGURES.map(({ figure, label, unit, kind, decimals }) => {
    const f = factory[figure]
    const r = returned[figure]
    const change = finite(f) && finite(r) ? r - f : null
    const pct = pctOf(f, r)
    return {
      figure,
      label,
      unit,
      factory: finite(f) ? f : null,
      returned: finite(r) ? r : null,
      change,
      changePct: kind === 'pct' ? pct : null,
      changeKind: kind,
      decimals,
      significant: isSignificant(figure, f, r, pct),
    }
  })
}

const reading = (code: CompareReading['code'], text: string): CompareReading => ({ code, text, basis: 'trade practice' })

/**
 * Plain-language readings of the change from the factory test to the return test (trade practice,
 * common practice of repair desks). A dead coil makes every other figure meaningless, so it is the
 * only reading then; no significant change reads as "no fault found likely".
 */
export function returnReadings(factory: CompareFigures, returned: CompareFigures): CompareReading[] {
  const reRatio = finite(factory.re20Ohm) && finite(returned.re20Ohm) && factory.re20Ohm > 0 ? returned.re20Ohm / factory.re20Ohm : null
  if ((returned.openCoil && !factory.openCoil) || (reRatio !== null && reRatio >= RETURN_RE_OPEN_FACTOR)) {
    return [reading('coil_open', 'Re open: no current flows → voice coil or lead wire broken (burnt out, or a lead torn off by over-excursion).')]
  }
  if (returned.shortedCoil && !factory.shortedCoil) {
    return [reading('coil_shorted', 'Coil shorted → turns burnt together after overload, or leads touching.')]
  }
  const out: CompareReading[] = []
  const pct = (k: 'fsHz' | 'qms' | 're20Ohm') => pctOf(factory[k], returned[k])
  const fsPct = pct('fsHz')
  const qmsPct = pct('qms')
  const rePct = pct('re20Ohm')
  if (factory.polarity && returned.polarity && factory.polarity !== returned.polarity) {
    out.push(reading('polarity_changed', 'Polarity changed since the factory test → leads swapped at a repair or in the customer\'s wiring.'))
  }
  if (fsPct !== null && fsPct < -RETURN_FS_SHIFT_PCT) {
    out.push(
      qmsPct !== null && qmsPct < -RETURN_QMS_DROP_PCT
        ? reading('suspension_fatigued', 'Fs dropped a lot and Qms fell → suspension fatigued or surround damaged.')
        : reading('suspension_fatigued', 'Fs dropped a lot → suspension softened (spider or surround fatigued by hard use).'),
    )
  } else if (fsPct !== null && fsPct > RETURN_FS_SHIFT_PCT) {
    out.push(reading('suspension_stiffened', 'Fs rose a lot → suspension stiffened: moisture, glue or debris on the spider or surround.'))
  }
  if (rePct !== null && rePct > RETURN_RE_SHIFT_PCT) {
    out.push(reading('coil_overheated', 'Re rose → coil overheated (wire or joint damaged by heat) or a lead joint going bad.'))
  } else if (rePct !== null && rePct < -RETURN_RE_SHIFT_PCT) {
    out.push(reading('shorted_turns', 'Re fell → shorted turns in the voice coil, usually after overheating.'))
  }
  if (isSignificant('rubBuzzDb', factory.rubBuzzDb, returned.rubBuzzDb, null)) {
    out.push(reading('new_rub_buzz', 'New rub and buzz → voice coil rubbing after overload (coil deformed or off centre), or debris in the gap.'))
  }
  const sensDrop = finite(factory.sensitivityDb) && finite(returned.sensitivityDb) ? factory.sensitivityDb - returned.sensitivityDb : null
  if (sensDrop !== null && sensDrop > RETURN_SENS_DROP_DB && rePct !== null && Math.abs(rePct) <= RETURN_RE_SHIFT_PCT) {
    out.push(reading('motor_or_cone', 'Sensitivity down with Re unchanged → magnet weakened (heat, shock) or cone damaged.'))
  }
  if (isSignificant('thdMaxPct', factory.thdMaxPct, returned.thdMaxPct, null)) {
    out.push(reading('distortion_up', 'Distortion up → coil off centre in the gap or suspension damaged.'))
  }
  if (out.length === 0) out.push(reading('no_fault_found', 'No significant change from the factory test → no fault found likely.'))
  return out
}

/** A safe file name for a download header: letters, digits, dot, dash and underscore only. */
export function returnSafeFileName(name: string, fallback = 'attachment'): string {
  const base = name.split(/[\\/]/).pop() ?? ''
  const cleaned = base.replace(/[^A-Za-z0-9._-]+/g, '_').replace(/^[._]+/, '').slice(0, 100)
  return cleaned || fallback
}

/**
 * The name an attachment downloads under: the uploader's name made safe, with the extension of the
 * type its bytes were found to be, so a PNG uploaded as "photo.html" downloads as "photo.png" and is
 * never opened as a page. An extension that already fits the type stays ("scan.JPEG").
 */
export function returnDownloadName(name: string, type: (typeof RETURN_ATTACHMENT_TYPES)[number], fallbackStem = 'attachment'): string {
  const safe = returnSafeFileName(name, '')
  const dot = safe.lastIndexOf('.')
  const ext = dot > 0 ? safe.slice(dot + 1) : ''
  const fits = RETURN_ATTACHMENT_EXTENSIONS[type]
  if (ext && fits.includes(ext.toLowerCase())) return safe
  const stem = dot > 0 ? safe.slice(0, dot) : safe
  return `${stem || fallbackStem}.${fits[0]}`
}
