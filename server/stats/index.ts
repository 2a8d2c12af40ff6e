/**
 * The statistics core of the quality pages (lot report, dashboard, drift, alerts): yield and the failure Pareto, capability
 * (histogram, Cp, Cpk) and drift (I-MR control chart with the Western Electric run rules).
 * The lot report, the dashboard, the alert rules and the PDF import it from here.
 *
 * Pure functions, explicit imports, no Nuxt, h3 or database. Sources, named again beside each
 * formula in the modules:
 * - NIST/SEMATECH e-Handbook of Statistical Methods: 6.1.6 "What is Process Capability?" (Cp, Cpk,
 *   Cpu, Cpl); 6.3.2 and 6.3.2.2 (control charts, individuals chart, WECO rules);
 * - D. C. Montgomery, Introduction to Statistical Quality Control (control-chart constants
 *   d2 = 1.128, D3 = 0, D4 = 3.267 for n = 2; baseline size);
 * - Western Electric Co., Statistical Quality Control Handbook (1956): the zone tests;
 * - Freedman & Diaconis (1981) and Sturges (1926): histogram bin widths; Hyndman & Fan (1996),
 *   definition 7: quantiles;
 * - mean and sample standard deviation: `summarize` of server/stats/summary.ts (corrected two-pass,
 *   Chan, Golub & LeVeque 1983).
 */
export { STATS_ERROR_CODES, StatsError, type StatsErrorCode } from './errors.ts'
export {
  UNNAMED_CHECK,
  computeYield,
  failurePareto,
  type ParetoBasis,
  type ParetoResult,
  type ParetoRow,
  type RetestRow,
  type UnitHistory,
  type ProductionResult,
  type YieldSummary,
} from './yield.ts'
export {
  MAX_BINS,
  capability,
  capabilityIndices,
  histogram,
  quantileSorted,
  type BinRule,
  type Capability,
  type Histogram,
  type HistogramOptions,
  type SpecLimits,
} from './capability.ts'
export {
  D2_N2,
  D3_N2,
  D4_N2,
  DEFAULT_BASELINE_LENGTH,
  RUN_RULES,
  SIGMA_MULTIPLIER,
  describeSignal,
  findBaseline,
  imrChart,
  imrLimits,
  movingRangeSignals,
  movingRanges,
  westernElectric,
  type ChartRule,
  type FigureLabel,
  type ImrChart,
  type ImrChartOptions,
  type ImrLimits,
  type ImrPoint,
  type RuleOptions,
  type RuleSignal,
  type RunRule,
  type Side,
} from './control.ts'
export { summarize, type Summary } from './summary.ts'
