/** The verdicts a mask gives a result; a result no mask has judged yet has none (null). */
export const VERDICTS = ['pass', 'fail'] as const
export type Verdict = (typeof VERDICTS)[number]
