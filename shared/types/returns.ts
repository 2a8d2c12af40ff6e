/** Response types of the returns desk (support's page for units sent back from the field). */
import type { CurveLimit } from './api'
import type { Verdict } from '../utils/verdict'

export type ReturnStatus = 'open' | 'closed'
export type Disposition = 'no_fault_found' | 'confirmed_defect' | 'damaged_in_use' | 'other'

export interface ReturnCategoryView {
  id: number
  label: string
  active: boolean
  sortOrder: number
  /** Returns filed under it (a used category can be deactivated, never deleted). */
  used: number
}

export interface ReturnSummary {
  id: number
  serial: string
  productCode: string
  lotCode: string | null
  receivedOn: string
  customerRef: string
  category: string
  status: ReturnStatus
  disposition: Disposition | null
  createdAt: string
  closedAt: string | null
}

export interface ReturnAttachmentView {
  id: number
  originalName: string
  contentType: 'image/png' | 'image/jpeg' | 'application/pdf'
  byteSize: number
  uploadedAt: string
  uploadedBy: string | null
}

export interface ReturnTestView {
  recordingId: number
  status: 'queued' | 'analysing' | 'done' | 'rejected' | 'failed'
  verdict: Verdict | null
  uploadedAt: string
  originalName: string
  error: { code: string; message: string } | null
}

export interface ReturnView extends ReturnSummary {
  categoryId: number
  complaint: string
  cause: string | null
  causeClass: string | null
  dispositionNote: string | null
  createdBy: string | null
  closedBy: string | null
  attachments: ReturnAttachmentView[]
  returnTests: ReturnTestView[]
}

/** The figures the comparison reads, as one result gives them. */
export interface CompareFigures {
  fsHz: number | null
  /** Re at 20 °C, or the raw Re when no ambient temperature was given (as the judge reads it). */
  re20Ohm: number | null
  qts: number | null
  qms: number | null
  qes: number | null
  sensitivityDb: number | null
  thdMaxPct: number | null
  rubBuzzDb: number | null
  polarity: 'normal' | 'inverted' | null
  openCoil: boolean
  shortedCoil: boolean
}

export type CompareFigure = 'fsHz' | 're20Ohm' | 'qts' | 'qms' | 'qes' | 'sensitivityDb' | 'thdMaxPct' | 'rubBuzzDb'

export interface DeltaRow {
  figure: CompareFigure
  label: string
  unit: string
  factory: number | null
  returned: number | null
  /** returned − factory, in the figure's unit. */
  change: number | null
  /** Change in % of the value; null for dB figures and THD (their change reads in dB and percentage points). */
  changePct: number | null
  /** How the change reads: in % of the value (Fs, Re, the Q's), in dB (sensitivity, rub and buzz), in percentage points (THD). */
  changeKind: 'pct' | 'db' | 'points'
  /** Decimals the figure is shown with (and its change in dB or points). */
  decimals: number
  /** Beyond the figure's threshold (shared/utils/returns.ts, common practice). */
  significant: boolean
}

/** A plain-language reading of the change: trade practice, not a diagnosis. */
export interface CompareReading {
  code: 'coil_open' | 'coil_shorted' | 'suspension_fatigued' | 'suspension_stiffened' | 'coil_overheated' | 'shorted_turns' | 'new_rub_buzz' | 'motor_or_cone' | 'distortion_up' | 'polarity_changed' | 'no_fault_found'
  text: string
  basis: 'trade practice'
}

export interface CompareTestRef {
  recordingId: number
  uploadedAt: string
  verdict: Verdict | null
  maskVersion: number | null
  /** The station that ran the test (the re-test form starts on the factory test's one). */
  stationId: number | null
}

export interface ReturnComparison {
  returnId: number
  serial: string
  /** The unit's latest production test with a result (never a return test). */
  factory: CompareTestRef | null
  /** The return's latest analysed return test. */
  returnTest: CompareTestRef | null
  /** A return test is still queued or being analysed. */
  pending: boolean
  polarity: { factory: 'normal' | 'inverted' | null; returned: 'normal' | 'inverted' | null }
  rows: DeltaRow[]
  readings: CompareReading[]
  curves: {
    freqHz: number[]
    factorySplDb: (number | null)[] | null
    returnSplDb: (number | null)[] | null
    factoryImpedanceOhm: (number | null)[] | null
    returnImpedanceOhm: (number | null)[] | null
    maskSplDb: CurveLimit | null
  } | null
  note: string
}

/** Return counts of a lot (lot report) or a product (dashboard). */
export interface ReturnRate {
  /** Returns registered. */
  returns: number
  /** Distinct units with at least one return. */
  returnedUnits: number
  /** returnedUnits / units tested; null when nothing was tested. */
  returnRate: number | null
}
