/**
 * Retry accounting of analysis, in one place. A recording is tried at most MAX_ATTEMPTS times,
 * counted two ways that must agree:
 * - by pg-boss: the queue retries a failed job RETRY_LIMIT times (with backoff), and retries a job
 *   whose worker vanished once it expires (jobExpirySeconds); the worker reads the job's own count
 *   (isLastTry) to end the recording `failed` on the last try;
 * - by the recording row: `attempts` counts every start (claimAttempt), so a recording whose worker
 *   keeps dying mid-analysis (the queue's count never sees a failure then) still stops.
 * The sweep (failRecordingsWithoutJob) catches the one case neither sees: the last try's worker died,
 * so pg-boss dropped the job without a failure anyone recorded.
 */
import type { Knex } from 'knex'
import { failOrphanedRecordings, markInAnalysis, markFinishedWithError } from '../repos/recordings'

/** Retries after the first try: a few, with exponential backoff. Our choice. */
export const RETRY_LIMIT = 3

/** One try plus the queue's retries: the most a recording is started. */
export const MAX_ATTEMPTS = RETRY_LIMIT + 1

/** How often a worker looks for recordings whose job the queue gave up on. */
export const ORPHAN_SWEEP_MS = 60_000

/** Seconds after which a job whose worker vanished is retried (CONETRAIL_JOB_EXPIRE_S, default 60). */
export function jobExpirySeconds(env = process.env): number {
  const n = Number(env.CONETRAIL_JOB_EXPIRE_S)
  return Number.isFinite(n) && n >= 1 ? n : 60
}

/** The queue's retry policy, given to pg-boss when the queue is created. */
export function queueRetryPolicy(): { retryLimit: number; retryDelay: number; retryBackoff: boolean; expireInSeconds: number } {
  return { retryLimit: RETRY_LIMIT, retryDelay: 1, retryBackoff: true, expireInSeconds: jobExpirySeconds() }
}

/** True on the job's last try: a failure now ends the recording instead of retrying it. */
export function isLastTry(job: { retryCount: number; retryLimit: number }): boolean {
  return job.retryCount >= job.retryLimit
}

/**
 * Claims a recording for analysis and counts the attempt; false when it is finished, or when its
 * attempts are used up (it is then marked failed).
 */
export function claimAttempt(db: Knex, recordingId: number, maxAttempts = MAX_ATTEMPTS): Promise<boolean> {
  return markInAnalysis(db, recordingId, maxAttempts)
}

/**
 * What a recording that failed for good says to its reader. The cause (an internal error's text,
 * perhaps a database statement) stays in the worker's log: the API never shows SQL or stack text.
 */
export const FAILED_FOR_GOOD_MESSAGE = 'The analysis failed on every try. The file is kept; an admin can find the cause in the worker log.'

/** Ends a recording `failed` after its last try. */
export function failForGood(db: Knex, recordingId: number): Promise<void> {
  return markFinishedWithError(db, recordingId, 'failed', 'analysis_failed', FAILED_FOR_GOOD_MESSAGE)
}

/** Marks failed the waiting recordings whose job is gone from the queue; returns how many. */
export function failRecordingsWithoutJob(db: Knex, queue: string): Promise<number> {
  return failOrphanedRecordings(db, queue)
}
