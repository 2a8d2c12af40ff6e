import type { Role } from '../utils/roles'

/** The body of every error answer: h3's shape with a machine code in data.code. */
export interface ApiErrorBody {
  statusCode: number
  message: string
  data: { code: string; issues?: { path: string; message: string }[] }
}

export interface HealthResponse {
  ok: boolean
  version: string
  database: { ok: boolean; latencyMs: number | null }
}

export interface SessionUser {
  id: number
  email: string
  displayName: string
  role: Role
}

export interface MeResponse {
  user: SessionUser
}

export interface PersonSummary {
  id: number
  email: string
  displayName: string
  role: Role
  active: boolean
  lastLoginAt: string | null
}

export interface CheckView {
  name: string
  value: number | null
  low: number | null
  high: number | null
  unit: string
  pass: boolean
  atHz?: number
}

/** POST /api/recordings: 202 for a new upload, 200 for the same file again. */
export interface UploadAccepted {
  id: number
  status: 'queued' | 'analysing' | 'done' | 'rejected' | 'failed'
  duplicate: boolean
}

export interface RecordingSummary {
  id: number
  serial: string
  productCode: string
  lotCode: string | null
  stationId: number | null
  stationName: string | null
  kind: 'sweep' | 'impedance_table'
  status: 'queued' | 'analysing' | 'done' | 'rejected' | 'failed'
  verdict: 'pass' | 'fail' | null
  failedChecks: string[]
  uploadedAt: string
  finishedAt: string | null
  originalName: string
  returnTest: boolean
  maskVersion: number | null
  error: { code: string; message: string } | null
}

export interface ResultParameters {
  reOhm: number | null
  re20Ohm: number | null
  ambientC: number | null
  fsHz: number | null
  qms: number | null
  qes: number | null
  qts: number | null
  leMh: number | null
  zmaxOhm: number | null
  zminOhm: number | null
  sensitivityDb: number | null
  thdPct: number | null
  thdMaxPct: number | null
  rubBuzzDb: number | null
  [name: string]: unknown
}

export interface CurveLimit {
  freqHz: number[]
  low: (number | null)[]
  high: (number | null)[]
}

export interface RecordingCurves {
  freqHz: number[]
  splDb: (number | null)[] | null
  impedanceOhm: (number | null)[] | null
  thdPct: (number | null)[] | null
  maskSplDb: CurveLimit | null
  maskImpedanceOhm: CurveLimit | null
}

export interface RecordingView extends RecordingSummary {
  parameters: ResultParameters | null
  checks: CheckView[]
  unmeasured: string[]
  notes: string[]
  thdAt: { hz: number; thdPct: number | null }[]
  flags: { polarity: 'normal' | 'inverted' | null; openCoil: boolean; shortedCoil: boolean; rubBuzz: boolean | null; [k: string]: unknown } | null
  classical: Record<string, unknown> | null
  engineVersion: string | null
  timingsMs: Record<string, number> | null
  curves?: RecordingCurves
}

export interface ProductView {
  id: number
  code: string
  name: string
  ratedImpedanceOhm: number
  nominalSize: string
  sensitivityBandHz: [number, number]
  activeMaskId: number | null
}

export interface StationView {
  id: number
  name: string
  line: string
  active: boolean
  tokenHint: string
  profileId: number
  profileVersion: number
  profile: Record<string, unknown>
}

export interface UnitView {
  serial: string
  product: ProductView
  lot: { code: string } | null
  verdict: 'pass' | 'fail' | null
  recordings: RecordingView[]
}
