/** The few jStat functions the tests use as a second, independent reference (jstat has no types of its own; CommonJS: a default import). */
declare module 'jstat' {
  const jstat: {
    jStat: {
      normal: { inv(p: number, mean: number, sd: number): number; cdf(x: number, mean: number, sd: number): number }
      chisquare: { inv(p: number, dof: number): number }
      studentt: { cdf(x: number, dof: number): number }
      noncentralt: { cdf(x: number, dof: number, ncp: number): number }
    }
  }
  export default jstat
}
