/**
 * Why more golden units make better limits, in numbers the new-mask page shows beside the count.
 *
 * Both figures assume the golden units are a random sample of good production from a normal
 * population (an assumption, not a law of the line):
 * - the sample standard deviation s of n units is uncertain by about σ/√(2(n − 1)) (large-sample
 *   standard error of s for normal data; from memory);
 * - a new good unit falls outside mean ± k·s with probability P(|T| > k / √(1 + 1/n)), T following
 *   Student's t with n − 1 degrees of freedom (the prediction interval for one future observation;
 *   NIST/SEMATECH e-Handbook of Statistical Methods, prediction intervals, from memory). With many
 *   units this tends to the normal 0.27 % of k = 3; with few, s is often an underestimate and good
 *   units are rejected far more often.
 */

/** Relative standard error of the golden standard deviation, in per cent. */
export function sigmaUncertaintyPct(n: number): number | null {
  return n >= 2 ? 100 / Math.sqrt(2 * (n - 1)) : null
}

/** Lanczos approximation of ln Γ(x), g = 7, nine coefficients (as published by Godfrey; from memory). */
const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059, 12.507343278686905,
  -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
]
function lnGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - lnGamma(1 - x)
  const z = x - 1
  let a = LANCZOS[0]!
  const t = z + 7.5
  for (let i = 1; i < LANCZOS.length; i++) a += LANCZOS[i]! / (z + i)
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(a)
}

/** Simpson steps for the t density integral: far finer than the one decimal shown. */
const SIMPSON_STEPS = 2000

/** Two-sided tail P(|T| > t) of Student's t with nu degrees of freedom, by Simpson's rule on the density. */
export function studentTwoSidedTail(t: number, nu: number): number {
  const c = Math.exp(lnGamma((nu + 1) / 2) - lnGamma(nu / 2)) / Math.sqrt(nu * Math.PI)
  const pdf = (x: number) => c * Math.pow(1 + (x * x) / nu, -(nu + 1) / 2)
  const h = t / SIMPSON_STEPS
  let sum = pdf(0) + pdf(t)
  for (let i = 1; i < SIMPSON_STEPS; i++) sum += (i % 2 ? 4 : 2) * pdf(i * h)
  return Math.max(0, 1 - 2 * (sum * h) / 3)
}

/** Per cent of good units that a mean ± k·s limit built from n golden units would reject, on one figure. */
export function goodUnitsRejectedPct(n: number, k: number): number | null {
  if (n < 2 || !(k > 0)) return null
  return 100 * studentTwoSidedTail(k / Math.sqrt(1 + 1 / n), n - 1)
}
