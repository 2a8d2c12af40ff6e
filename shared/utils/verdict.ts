/**
 * The verdicts a mask gives a result; a result no mask has judged yet has none (null).
 * `retest`: the recording could not decide (a disturbance, a station fault, a figure whose
 * uncertainty straddles its limit); it never counts as a fail, and the unit is measured again.
 */
export const VERDICTS = ['pass', 'fail', 'retest'] as const
export type Verdict = (typeof VERDICTS)[number]

/** Verdicts that decide a unit: its verdict is its latest decisive result. */
export const DECISIVE_VERDICTS = ['pass', 'fail'] as const satisfies readonly Verdict[]
export type DecisiveVerdict = (typeof DECISIVE_VERDICTS)[number]

/** Why a result ended `retest`, most urgent first (a result names one: the first that applies). */
export const RETEST_REASONS = ['probe_fault', 'level', 'transient', 'hum', 'noise', 'undecided'] as const
export type RetestReason = (typeof RETEST_REASONS)[number]

/** What happened and what to do, in the technician's words, per retest reason. */
export const RETEST_ADVICE: Record<RetestReason, { label: string; what: string; todo: string }> = {
  probe_fault: {
    label: 'Probe or lead fault',
    what: 'One of the station\'s measuring leads gave no plausible signal while the others did: the unit was not judged.',
    todo: 'Re-seat the probe clips and check the cable, then measure again.',
  },
  level: {
    label: 'Level off',
    what: 'The station played the sweep at a level far from its profile: the figures cannot be compared with the limits.',
    todo: 'Check the amplifier gain and the station profile, then measure again.',
  },
  transient: {
    label: 'Disturbed by a knock',
    what: 'A short sound not caused by the unit (a knock, a dropped tool, a door) fell into the sweep.',
    todo: 'Close the test box, keep the bench quiet during the sweep and measure again.',
  },
  hum: {
    label: 'Mains hum',
    what: 'Mains hum on the recording is too strong to decide every check.',
    todo: 'Check the cable screens and the earth connections (a ground loop), then measure again.',
  },
  noise: {
    label: 'Too noisy',
    what: 'Background noise was too close to a limit for the check to decide.',
    todo: 'Close the test box, stop nearby noisy work and measure again.',
  },
  undecided: {
    label: 'Could not decide',
    what: 'A figure the limits need could not be measured from this recording.',
    todo: 'Check that the unit is seated and connected, then measure again.',
  },
}

/** Whether a verdict decides the unit (pass or fail); `retest` and no verdict yet do not. */
export function isDecisive(v: Verdict | null | undefined): v is DecisiveVerdict {
  return v === 'pass' || v === 'fail'
}

/**
 * A unit's verdict from the verdicts of its finished production results, newest first: retests are
 * passed over (they decide nothing), so it is the latest other result's verdict (`pass`, `fail`, or
 * null when that result is not judged yet); `retest` when every judged result so far is a retest.
 */
export function unitVerdictOf(newestFirst: readonly (Verdict | null)[]): Verdict | null {
  const standing = newestFirst.find((v) => v !== 'retest')
  if (standing !== undefined) return standing
  return newestFirst.length ? 'retest' : null
}

/**
 * Retests in a row at the newest end of a unit's production results (newest first): the retests
 * since its latest decisive result. Unjudged results (no mask yet) neither count nor break the run.
 */
export function retestsInARow(newestFirst: readonly (Verdict | null)[]): number {
  let n = 0
  for (const v of newestFirst) {
    if (isDecisive(v)) break
    if (v === 'retest') n++
  }
  return n
}

/** Default of a product's retest limit: after this many retests in a row a unit needs review (our choice). */
export const DEFAULT_RETEST_LIMIT = 2
/** Bounds of a product's retest limit (the products.retest_limit check). */
export const RETEST_LIMIT_MIN = 1
export const RETEST_LIMIT_MAX = 10
