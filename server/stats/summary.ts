/** The mean and sample standard deviation every statistic here and the mask proposal start from. */

export interface Summary {
  n: number
  mean: number
  /** Sample standard deviation (n − 1); 0 for a single value. */
  sd: number
}

/**
 * Mean and sample standard deviation of the finite values, by the two-pass algorithm (first the
 * mean, then the squared deviations from it), which avoids the cancellation of the one-pass
 * sum-of-squares formula on "stiff" data (NIST StRD Univariate background, Simon & Lesage 1989).
 * Returns null when no value is finite.
 */
export function summarize(values: readonly (number | null | undefined)[]): Summary | null {
  const xs = values.filter((v): v is number => typeof v === 'number' && Number.isFinite(v))
  const n = xs.length
  if (n === 0) return null
  let sum = 0
  for (const x of xs) sum += x
  const mean = sum / n
  let ss = 0
  let residual = 0
  for (const x of xs) {
    const d = x - mean
    ss += d * d
    residual += d
  }
  // Corrected two-pass (Chan, Golub & LeVeque 1983): removes what rounding left in the mean.
  const sd = n > 1 ? Math.sqrt(Math.max(0, (ss - (residual * residual) / n) / (n - 1))) : 0
  return { n, mean, sd }
}
