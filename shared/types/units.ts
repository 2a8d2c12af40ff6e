import type { ProductView, RecordingView } from './api'
import type { Verdict } from '../utils/verdict'

/** One unit in the search answer: enough to tell it apart without opening it. */
export interface UnitHit {
  serial: string
  productCode: string
  productName: string
  lotCode: string | null
  /** When its latest recording was uploaded (null: registered, nothing uploaded). */
  lastTestedAt: string | null
  /** Recordings of the unit, return tests included. */
  tests: number
  /** The unit's verdict: its latest finished production (non-return) test's, passing over retests (`retest` when all are). */
  verdict: Verdict | null
}

/**
 * GET /api/units?q= : `exact` when a serial equals the query (case ignored), `prefix` when serials
 * start with it (newest first, at most SEARCH_LIST_LIMIT; `more` when others were left out),
 * `unknown` when no serial starts with it: never tested here, with the nearest serials.
 */
export interface UnitSearchAnswer {
  /** The query as understood (a scanner's control characters and start/stop characters removed). */
  query: string
  match: 'exact' | 'prefix' | 'unknown'
  units: UnitHit[]
  more: boolean
  nearest: UnitHit[]
}

/** Who ran a test: a signed-in person, or a station posting with its own token. */
export interface TestOperator {
  kind: 'person' | 'station'
  name: string
}

/** One test in a unit's factory record: the recording, its result, and who, where and with what calibration. */
export interface UnitTest extends RecordingView {
  /** 1 for the unit's first recording, in upload order. */
  number: number
  operator: TestOperator | null
  stationLine: string | null
  profileVersion: number | null
  ambientC: number | null
  note: string | null
}

/** GET /api/units/:serial: the unit's factory record. */
export interface UnitView {
  serial: string
  product: ProductView
  lot: { code: string } | null
  /**
   * The unit's verdict: that of its latest finished production (non-return) test that is not a
   * retest; `retest` when every such test so far ended retest (shared/utils/verdict.ts unitVerdictOf).
   */
  verdict: Verdict | null
  /** Retests since the unit's latest decisive result, and whether that reaches its product's retest limit. */
  retests: { inARow: number; limit: number; needsReview: boolean }
  /** Every test newest first, return tests included (marked `returnTest`). */
  recordings: UnitTest[]
  /** The latest finished production test that is not a retest (else the latest): the one a test certificate states. */
  latestProductionId: number | null
  registeredAt: string
  /** What the product's current mask says of each result, beside its historic verdict (null without a released mask). */
  currentMask: { version: number; results: { recordingId: number; verdict: Verdict; failedChecks: string[] }[] } | null
}

/** POST /api/units/:serial/certificate/send answer. */
export interface CertificateSent {
  serial: string
  recipients: string[]
  /** Addresses the SMTP server accepted. */
  accepted: string[]
  messageId: string
  attachment: string
}
