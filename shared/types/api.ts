import type { Role } from '../utils/roles'
import type { ErrorCode } from '../utils/error-codes'
import type { Coil } from '../utils/coil'
import type { DecisionRule, LimitFloors, ScalarLimitName } from '../utils/mask'
import type { RecordingPurpose, RecordingStatus } from '../utils/recordings'
import type { StationProfile } from '../utils/station-profile'
import type { AcceptedValue, CheckedFigure, ReferenceFigures, VerificationLimit } from '../utils/reference-units'
import type { CheckPlan, StationState } from '../utils/station-checks'
import type { RetestReason, Verdict } from '../utils/verdict'

/** Every error answer (server/utils/errors.ts, errorAnswer); `code` is from shared/utils/error-codes.ts. */
export interface ApiErrorBody {
  statusCode: number
  message: string
  data: { code: ErrorCode; issues?: { path: string; message: string }[]; requestId?: string }
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
  /** False also when the check could not decide (see `undecided`): a check passes only when decided inside its limits. */
  pass: boolean
  atHz?: number
  /**
   * The check could not decide: its figure is missing, or its uncertainty straddles the limit, or a
   * disturbance of the recording (see the result's retest reason) may have caused the excess.
   */
  undecided?: boolean
  /** ± of the figure (95 % coverage), in the check's unit, where noise limits it. */
  uncertainty?: number
  /** The figure lies below the noise floor: `value` is the floor, the true figure is lower. */
  below?: boolean
  /** Decided, but within its uncertainty of a limit (the mask's decision rule says how such a figure decides). */
  marginal?: boolean
}

/** POST /api/recordings: 202 for a new upload, 200 for the same file again. */
export interface UploadAccepted {
  id: number
  status: RecordingStatus
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
  status: RecordingStatus
  /**
   * `pass`, `fail`, `retest` (measure the unit again: see retestReason), or null while no mask is
   * released. A station that knows only pass and fail ships a unit only on `pass`.
   */
  verdict: Verdict | null
  /** Why the verdict is `retest` (null for any other verdict). */
  retestReason: RetestReason | null
  /** What happened and what to do, in the technician's words (shared/utils/verdict.ts RETEST_ADVICE); null unless `retest`. */
  retestAdvice: RetestAdvice | null
  /** Names of the checks decided outside their limits (undecided checks are not failures: see undecidedChecks). */
  failedChecks: string[]
  /** Names of the checks that could not decide (figure missing, or its uncertainty straddles the limit). */
  undecidedChecks: string[]
  uploadedAt: string
  finishedAt: string | null
  originalName: string
  returnTest: boolean
  /** What the recording was made for; only production tests count in yield, lots and Cpk. */
  purpose: RecordingPurpose
  maskVersion: number | null
  error: { code: string; message: string } | null
}

/** The figures every result carries, as the pages read them; the engine's AnalysisParameters extends them. */
export interface ResultFigures {
  /** Re as measured (at the test temperature). */
  reOhm: number | null
  /** Re referred to 20 °C (copper, IEC 60028); null without an ambient temperature. */
  re20Ohm: number | null
  ambientC: number | null
  fsHz: number | null
  qms: number | null
  qes: number | null
  qts: number | null
  leMh: number | null
  zmaxOhm: number | null
  /** Minimum of |Z| above Fs (rated-impedance check, IEC 60268-5). */
  zminOhm: number | null
  /** Mean dB SPL at 2.83 V / 1 m over the sensitivity band. */
  sensitivityDb: number | null
  /** THD at 1 kHz, %. */
  thdPct: number | null
  thdMaxPct: number | null
  /** Rub-and-buzz level: peak high-order residual re the fundamental's peak, dB (see docs/method.md, "Rub and buzz"). */
  rubBuzzDb: number | null
}

/** A stored result's parameters: the figures above and whatever else the engine version recorded. */
export interface ResultParameters extends ResultFigures {
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
  /** Null where the THD is below its noise floor (see thdFloorPct). */
  thdPct: (number | null)[] | null
  /** ± of the response per point, dB (k = 2); null in results made before it existed. */
  splUncertaintyDb: (number | null)[] | null
  /** The THD below which a reading is not told apart from the noise, %; null in older results. */
  thdFloorPct: (number | null)[] | null
  maskSplDb: CurveLimit | null
  maskImpedanceOhm: CurveLimit | null
}

/** A retest reason in the technician's words. */
export interface RetestAdvice {
  label: string
  what: string
  todo: string
}

export interface RecordingView extends RecordingSummary {
  parameters: ResultParameters | null
  checks: CheckView[]
  unmeasured: string[]
  /** Things the station should look at that did not change the verdict (e.g. a level 1–6 dB off the profile). */
  warnings: string[]
  notes: string[]
  thdAt: { hz: number; thdPct: number | null; thdFloorPct?: number | null }[]
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
  /** The voice-coil description, when the engineer gave one. */
  coil: Coil | null
  /** DC resistance at 20 °C the coil should have (shared/utils/coil.ts), Ω; null without a coil. */
  expectedRe20Ohm: number | null
  /** Warn when the golden units' mean Re differs from expectedRe20Ohm by more than this, %. */
  reWarnPct: number
  /** After this many retests in a row a unit needs review (listed on its lot page). */
  retestLimit: number
  /** The product's own floors of proposed limits (absent names: the defaults, shared/utils/mask.ts). */
  limitFloors: LimitFloors
  /** A release whose estimated false-reject share is above this, %, asks for a second confirmation. */
  falseRejectMaxPct: number
}

export interface StationView {
  id: number
  name: string
  line: string
  active: boolean
  tokenHint: string
  profileId: number
  profileVersion: number
  profile: StationProfile
  /** When the station last uploaded a recording (null: never). */
  lastUploadAt: string | null
}

export interface MaskSummary {
  id: number
  productCode: string
  version: number
  status: 'draft' | 'released' | 'retired'
  name: string
  goldenCount: number
  createdAt: string
  createdBy: string | null
  releasedAt: string | null
  releasedBy: string | null
  releaseComment: string | null
  retiredAt: string | null
}

export interface GoldenFigure {
  n: number
  mean: number
  sd: number
}

/** How one proposed scalar limit was set. */
export interface LimitBasis {
  /** `interval`: the normal tolerance interval; `floor`: the product's floor was wider; `k_sigma`: a fixed k the engineer asked for. */
  rule: 'interval' | 'floor' | 'k_sigma'
  /** Golden units that measured the figure. */
  n: number
  /** The multiplier of s (the tolerance factor for n, or the fixed k). */
  k: number
  mean: number
  sd: number
  /** The floor as a half-width in the figure's unit. */
  floor: number
  /** The coverage this limit was built for (the mask's, shared among its limits). */
  coverage: number
  /** An upper limit only (one-sided factor). */
  oneSided: boolean
}

/** How a proposed curve band was set, over its points and sides. */
export interface CurveBasis {
  rule: 'interval' | 'floor' | 'mixed' | 'k_sigma'
  /** The fewest golden curves at any point, and k for that n (the largest k used). */
  n: number
  k: number
  coverage: number
  /** Point sides (two per point) set, and how many of them by the floor. */
  sides: number
  sidesByFloor: number
}

export interface ProposalWarning {
  code: 'few_golden_units' | 'golden_more_alike'
  /** The figure it is about, when one. */
  figure?: string
  text: string
}

/** The golden units' spread against the product's recent production, per figure. */
export interface SpreadComparison {
  goldenSd: number
  goldenN: number
  /** Robust σ (1.4826 × MAD) of the product's latest production results, golden units left out. */
  historySd: number
  historyN: number
  /** goldenSd / historySd. */
  ratio: number
}

/** What a mask's proposal said, stored with the draft (never changed afterwards). */
export interface MaskProposal {
  /** Share of good units the whole mask should pass, and the confidence of each interval. */
  coverage: number
  confidence: number
  /** A fixed k the engineer asked for instead of tolerance factors; null: tolerance intervals. */
  fixedK: number | null
  /** Limits sharing the coverage, and each one's coverage 1 − (1 − coverage) / limitCount. */
  limitCount: number
  coveragePerLimit: number
  goldenUnits: number
  scalars: Partial<Record<ScalarLimitName, LimitBasis>>
  curves: { splDb?: CurveBasis; impedanceOhm?: CurveBasis }
  warnings: ProposalWarning[]
  spread: Partial<Record<ScalarLimitName, SpreadComparison>>
  /** The limits as proposed, to tell which ones the engineer edited. */
  proposedLimits: unknown
}

/** Estimated false-reject shares of a mask's limits from its golden units (normal model), 0–1. */
export interface FalseRejectEstimate {
  byCheck: Partial<Record<string, number>>
  overall: number
}

export interface MaskView extends MaskSummary {
  /** Product code (POST /api/masks answers { id, product, version, status, curve, scalars }). */
  product: string
  productId: number
  limits: {
    scalars: Partial<Record<ScalarLimitName, { low: number | null; high: number | null }>>
    polarityNormal: boolean
    ratedImpedanceRule: boolean
    curves: { splDb?: CurveLimit; impedanceOhm?: CurveLimit }
    thdBandHz: [number, number] | null
    decisionRule: DecisionRule
  }
  /** How the limits were proposed; null for masks made before proposals were recorded. */
  proposal: MaskProposal | null
  /** The estimated false-reject share of the current limits, from the golden units (normal model). */
  estimate: FalseRejectEstimate
  /** The response limit curve (same as limits.curves.splDb), null when the mask has none. */
  curve: CurveLimit | null
  scalars: MaskView['limits']['scalars']
  golden: {
    serials: string[]
    /** Per figure, the golden units' mean and sample standard deviation. */
    figures: Partial<Record<string, GoldenFigure>>
    /** The golden units' curves, for the chart. */
    curves: { serial: string; recordingId: number; splDb: (number | null)[] | null; impedanceOhm: (number | null)[] | null }[]
    freqHz: number[]
    meanSplDb: (number | null)[] | null
  }
  /** Expected Re at 20 °C from the product's coil description, and a warning when the golden units disagree. */
  expectedRe20Ohm: number | null
  reWarning: string | null
}

export interface MaskCandidate {
  serial: string
  recordingId: number
  kind: 'sweep' | 'impedance_table'
  verdict: Verdict | null
  uploadedAt: string
  re20Ohm: number | null
  fsHz: number | null
  qts: number | null
  sensitivityDb: number | null
}

export interface MaskPreview {
  maskId: number
  considered: number
  /** yieldPct: pass / (pass + fail); a retest decides nothing and is counted apart. */
  draft: { pass: number; fail: number; retest: number; yieldPct: number | null }
  active: { maskId: number; version: number; pass: number; fail: number; retest: number; yieldPct: number | null } | null
  /** Units whose verdict would change: newly failing first, then newly passing, then the rest; newest first within each (at most 500 listed). */
  changed: { serial: string; recordingId: number; from: Verdict | null; to: Verdict; checks: string[] }[]
  changedTotal: number
  /**
   * Known-good units (latest result passed when judged, or a golden unit of this draft) and how many
   * the draft would fail: the expected false-reject share on this product's history.
   */
  knownGood: { units: number; draftFails: number; falseRejectPct: number | null }
  /** Per check: results it would newly fail and newly pass. */
  byCheck: { check: string; newFails: number; newPasses: number }[]
}

/** POST /api/masks/:id/release and /retire. */
export interface MaskTransition {
  id: number
  version: number
  status: 'released' | 'retired'
  /** Release only: never-judged results the new mask judged. */
  judgedUnjudged?: number
}

/** POST /api/stations (201) and POST /api/stations/:id/token: the token is shown this once. */
export interface StationToken {
  id: number
  token: string
}

/** A reference unit of a product, with the values its station checks are judged against. */
export interface ReferenceUnitView {
  id: number
  serial: string
  productCode: string
  description: string
  keptAt: string
  /** The trusted station the accepted values were measured on. */
  stationId: number | null
  stationName: string | null
  accepted: ReferenceFigures<AcceptedValue>
  limits: ReferenceFigures<VerificationLimit>
  /** The recordings the accepted values are the mean of. */
  basisRecordingIds: number[]
  createdAt: string
  createdBy: string | null
  retiredAt: string | null
  retireComment: string | null
}

/** One station check: the reference unit's figures against their verification limits. */
export interface StationCheckView {
  id: number
  recordingId: number
  referenceUnitId: number
  serial: string
  pass: boolean
  figures: ReferenceFigures<CheckedFigure>
  checkedAt: string
}

/** A station's check plan, its state and its latest checks. */
export interface StationCheckStatus {
  stationId: number
  plan: CheckPlan | null
  state: StationState
  checks: StationCheckView[]
}
