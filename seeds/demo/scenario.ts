/**
 * The demo scenario, as pure data: an invented factory, its driver models, stations, lots and
 * units, and a plan of every test each unit goes through. Deterministic for a seed; the database
 * seed (seeds/02-demo-factory.ts) turns the plan into recordings through the real path.
 *
 * Everything here is invented: the factory, the models, the serial format and the numbers.
 */
import { COPPER_ALPHA_PER_K, DEFAULT_PROFILE, stationProfileSchema, type StationProfile } from '../../server/analysis/index.ts'
import { gaussian, mulberry32, type Defect, type DriverModel } from '../../fixtures/generator.ts'
import type { Coil } from '../../shared/utils/coil.ts'

export const FACTORY = {
  name: 'Quillbank Transducer Works',
  /** Two letters that start every serial and lot code. */
  tag: 'QB',
} as const

/**
 * A driver described by its physical parts (Small, JAES 1972, lumped model), so that a fault in one
 * part moves every figure it should: Fs, Qms and Qes all follow from Mms, Cms, Rms, Bl and Re.
 */
export interface PhysicalDriver {
  /** Voice-coil DC resistance at 20 °C, Ω. */
  re20Ohm: number
  leH: number
  blTm: number
  mmsKg: number
  /** Suspension compliance, m/N. */
  cmsMPerN: number
  /** Mechanical resistance, kg/s. */
  rmsKgPerS: number
  sdM2: number
}

/** Spread between good units: relative standard deviation of each part (our invented process). */
export type Spread = Record<keyof PhysicalDriver, number>

export interface DemoProduct {
  code: string
  name: string
  ratedImpedanceOhm: number
  nominalSize: string
  sensitivityBandHz: [number, number]
  /** Tag in the serial and lot codes. */
  serialTag: string
  /** The voice coil as designed (its expected Re at 20 °C matches the nominal Re). */
  coil: Coil
  nominal: PhysicalDriver
  spread: Spread
  /** Invented lot numbers and how many units each lot sends to the end-of-line test. */
  lots: { number: string; units: number }[]
  /** Stations (by name) that test this product. */
  stations: string[]
  /** Faults planted among its units: how many of each, optionally all in one lot. */
  faults: { fault: Fault; count: number; lotIndex?: number }[]
  /** Units measured before the first mask that stay unjudged. */
  unjudged: number
}

/** Spread of a well-run cone line (our invention; the compliance of spiders and surrounds varies most). */
const TYPICAL_SPREAD: Spread = {
  re20Ohm: 0.012,
  leH: 0.04,
  blTm: 0.015,
  mmsKg: 0.02,
  cmsMPerN: 0.06,
  rmsKgPerS: 0.08,
  sdM2: 0.005,
}

export const PRODUCTS: DemoProduct[] = [
  {
    code: 'W165-8',
    name: 'Woofer 165 mm, 8 Ω',
    ratedImpedanceOhm: 8,
    nominalSize: '6.5 in',
    sensitivityBandHz: [300, 3000],
    serialTag: '6W',
    coil: { awg: 30, turns: 196, meanDiameterMm: 32.5, layers: 4, strands: 1 },
    // Fs ≈ 41 Hz, Qms ≈ 4.3, Qes ≈ 0.44, about 89 dB at 2.83 V / 1 m.
    nominal: { re20Ohm: 6.8, leH: 0.0006, blTm: 7.7, mmsKg: 0.015, cmsMPerN: 0.001, rmsKgPerS: 0.9, sdM2: 0.0133 },
    spread: TYPICAL_SPREAD,
    lots: [
      { number: '0417', units: 34 },
      { number: '0418', units: 34 },
      { number: '0419', units: 32 },
    ],
    stations: ['L1-EOL-A', 'L1-EOL-B'],
    faults: [
      { fault: 'stiff_spider', count: 2 },
      { fault: 'wrong_wire', count: 1 },
      // A magnetiser fault hit one lot.
      { fault: 'weak_magnet', count: 3, lotIndex: 2 },
      { fault: 'swapped_leads', count: 2 },
      { fault: 'rubbing_coil', count: 2 },
    ],
    unjudged: 1,
  },
  {
    code: 'W130-8',
    name: 'Woofer 130 mm, 8 Ω',
    ratedImpedanceOhm: 8,
    nominalSize: '5.25 in',
    sensitivityBandHz: [300, 3000],
    serialTag: '5W',
    coil: { awg: 31, turns: 184, meanDiameterMm: 26.6, layers: 4, strands: 1 },
    // A four-layer copper coil of about 6.6 Ω (a 5.25-inch 8 Ω woofer's coil is typically about 6.5 Ω: common practice, no source); Fs ≈ 58 Hz.
    nominal: { re20Ohm: 6.6, leH: 0.00045, blTm: 6.4, mmsKg: 0.0085, cmsMPerN: 0.000886, rmsKgPerS: 0.885, sdM2: 0.0085 },
    spread: TYPICAL_SPREAD,
    lots: [
      { number: '0233', units: 40 },
      { number: '0234', units: 40 },
    ],
    stations: ['L2-EOL'],
    faults: [
      { fault: 'stiff_spider', count: 1 },
      { fault: 'wrong_wire', count: 1 },
      { fault: 'swapped_leads', count: 1 },
      { fault: 'rubbing_coil', count: 1 },
      { fault: 'open_coil', count: 1 },
    ],
    unjudged: 1,
  },
  {
    code: 'F100-4',
    name: 'Full-range 100 mm, 4 Ω',
    ratedImpedanceOhm: 4,
    nominalSize: '4 in',
    sensitivityBandHz: [500, 5000],
    serialTag: '4F',
    coil: { awg: 28, turns: 252, meanDiameterMm: 20, layers: 2, strands: 1 },
    // Fs ≈ 85 Hz, Qms ≈ 5, Qes ≈ 0.53.
    nominal: { re20Ohm: 3.4, leH: 0.0001, blTm: 3.8, mmsKg: 0.0042, cmsMPerN: 0.000835, rmsKgPerS: 0.449, sdM2: 0.0053 },
    spread: TYPICAL_SPREAD,
    lots: [
      { number: '0088', units: 30 },
      { number: '0089', units: 30 },
    ],
    stations: ['L3-EOL'],
    faults: [
      { fault: 'stiff_spider', count: 1 },
      { fault: 'wrong_wire', count: 1 },
      { fault: 'weak_magnet', count: 1 },
      { fault: 'swapped_leads', count: 1 },
      { fault: 'rubbing_coil', count: 1 },
    ],
    unjudged: 0,
  },
]

export interface DemoStation {
  name: string
  line: string
  profile: StationProfile
}

/** Four end-of-line stations; the profiles differ as real benches do (another microphone, another sense resistor). */
export const STATIONS: DemoStation[] = [
  { name: 'L1-EOL-A', line: 'Line 1', profile: DEFAULT_PROFILE },
  { name: 'L1-EOL-B', line: 'Line 1', profile: stationProfileSchema.parse({ micSensitivityVPerPa: 0.0125, senseResistorOhm: 0.5 }) },
  { name: 'L2-EOL', line: 'Line 2', profile: stationProfileSchema.parse({ micDistanceM: 0.15 }) },
  { name: 'L3-EOL', line: 'Line 3', profile: stationProfileSchema.parse({ micSensitivityVPerPa: 0.0125, sweep: { f1Hz: 20, f2Hz: 20_000, durationS: 1, preSilenceS: 0.05, levelVrms: 1.5 } }) },
]

/** Why a unit is bad, in the words of the line. */
export const FAULTS = ['stiff_spider', 'wrong_wire', 'weak_magnet', 'swapped_leads', 'rubbing_coil', 'open_coil'] as const
export type Fault = (typeof FAULTS)[number]

/** The check each fault should trip (the judge's check names). */
export const EXPECTED_CHECK: Record<Fault, string> = {
  stiff_spider: 'fsHz',
  wrong_wire: 're20Ohm',
  weak_magnet: 'sensitivityDb',
  swapped_leads: 'polarity',
  rubbing_coil: 'rubBuzzDb',
  open_coil: 'coil',
}

/** Rough fault sizes (our invented failure modes; the physics of each is in faulty()). */
const STIFF_SPIDER_CMS_FACTOR = 0.55
/** One AWG step thinner wire on the same turns: +26 % resistance (AWG ratio 92^(1/39) per step, squared; ASTM B258 defines the series). */
const AWG_STEP_RESISTANCE = Math.pow(92, 2 / 39)
const WEAK_MAGNET_BL_FACTOR = 0.8

/** Applies a fault to a unit's parts; returns the generator defect that goes with it. */
export function faulty(d: PhysicalDriver, fault: Fault | null, productCode: string): { parts: PhysicalDriver; defect: Defect } {
  switch (fault) {
    case 'stiff_spider':
      // A stiffer suspension: less compliance, so Fs rises by 1/√0.55 ≈ 1.35.
      return { parts: { ...d, cmsMPerN: d.cmsMPerN * STIFF_SPIDER_CMS_FACTOR }, defect: 'none' }
    case 'wrong_wire': {
      // The 4 Ω full-range got a gauge thicker (Re low), the woofers a gauge thinner (Re high).
      const f = productCode === 'F100-4' ? 1 / AWG_STEP_RESISTANCE : AWG_STEP_RESISTANCE
      return { parts: { ...d, re20Ohm: d.re20Ohm * f }, defect: 'none' }
    }
    case 'weak_magnet':
      // A half-charged magnet: less flux, Bl down 20 %, about −1.9 dB of sensitivity (20·log10 0.8).
      return { parts: { ...d, blTm: d.blTm * WEAK_MAGNET_BL_FACTOR }, defect: 'none' }
    case 'swapped_leads':
      return { parts: d, defect: 'inverted_polarity' }
    case 'rubbing_coil':
      return { parts: d, defect: 'rub_buzz' }
    case 'open_coil':
      return { parts: d, defect: 'open_coil' }
    default:
      return { parts: d, defect: 'none' }
  }
}

/**
 * The generator's driver model at a coil temperature: Fs = 1/(2π√(Mms·Cms)), Qms = ω0·Mms/Rms,
 * Qes = ω0·Mms·Re/Bl² (Small, JAES 1972); Re rises with temperature as copper does (IEC 60028,
 * α = 0.00393 /K).
 */
export function toDriverModel(d: PhysicalDriver, coilC: number): DriverModel {
  const reOhm = d.re20Ohm * (1 + COPPER_ALPHA_PER_K * (coilC - 20))
  const w0 = 1 / Math.sqrt(d.mmsKg * d.cmsMPerN)
  return {
    reOhm,
    leH: d.leH,
    fsHz: w0 / (2 * Math.PI),
    qms: (w0 * d.mmsKg) / d.rmsKgPerS,
    qes: (w0 * d.mmsKg * reOhm) / (d.blTm * d.blTm),
    blTm: d.blTm,
    sdM2: d.sdM2,
  }
}

export type TestPhase = 'before_mask' | 'golden' | 'production'

/** One test of one unit: a new recording. */
export interface PlannedTest {
  kind: 'sweep' | 'impedance_table'
  /** Station name; null for an impedance table from the lab. */
  station: string | null
  /** Minutes after the scenario start. */
  atMin: number
  ambientC: number
  /** The unit's parts as tested (a reworked unit has its fault cleared). */
  parts: PhysicalDriver
  defect: Defect
  seed: number
  phase: TestPhase
  /** Who uploaded it: the bench technician, a station by its token, or the engineer. */
  by: 'technician' | 'station' | 'engineer'
  note: string | null
  /** Rub-and-buzz burst level for a rubbing coil, Pa. */
  rubBuzzPa?: number
}

export interface PlannedUnit {
  serial: string
  productCode: string
  lotCode: string
  fault: Fault | null
  golden: boolean
  tests: PlannedTest[]
}

export interface ScenarioPlan {
  units: PlannedUnit[]
  /** Minutes after the start at which each product's first mask is released. */
  maskReleaseAtMin: number
  /** Length of the scenario, minutes (it ends a little before the seed runs). */
  spanMin: number
}

/**
 * With a dozen golden units and k = 3, a good unit falls outside a two-sided limit about 1.5 % of
 * the time per figure (Student's t with 11 degrees of freedom at 3/√(1 + 1/12) ≈ 2.88), so some
 * seeds draw goldens that understate the spread and fail good units on Fs or sensitivity. This
 * seed was picked among 200 for goldens that represent their line, so the demo's failures are the
 * planted ones.
 */
export const DEFAULT_SCENARIO_SEED = 2643
/** Golden units per product: more than the minimum of five, since σ from few units is itself uncertain. */
export const GOLDEN_PER_PRODUCT = 12
/** Production shifts: four days, fourteen hours each, the last one ending just before now. */
const SHIFT_MIN = 14 * 60
const DAYS = 4
const DAY_MIN = 24 * 60
const SPAN_MIN = (DAYS - 1) * DAY_MIN + SHIFT_MIN
/** Golden units and the first units are measured in the first two hours; the masks follow. */
const MASK_RELEASE_AT_MIN = 150
const PRODUCTION_START_MIN = 165
const RETESTS = { swappedLeadsReworked: 2, rubbingRetested: 1, goodRescanned: 2 }
const TABLES_PER_PRODUCT = 2

export function lotCode(p: DemoProduct, lotIndex: number): string {
  return `${FACTORY.tag}${p.serialTag}-${p.lots[lotIndex]!.number}`
}

/** Serial format (ours): factory tag, product tag, lot number, four-digit sequence in the lot: QB6W-0417-0031. */
export function serialOf(p: DemoProduct, lotIndex: number, seq: number): string {
  return `${lotCode(p, lotIndex)}-${String(seq).padStart(4, '0')}`
}

/** Production minutes (after PRODUCTION_START_MIN) mapped onto the shifts: shift d runs [d·24 h, d·24 h + 14 h]. */
function productionMinute(fraction: number): number {
  const total = DAYS * SHIFT_MIN - PRODUCTION_START_MIN
  const m = PRODUCTION_START_MIN + fraction * total
  const day = Math.min(DAYS - 1, Math.floor(m / SHIFT_MIN))
  return day * DAY_MIN + (m - day * SHIFT_MIN)
}

/** Room temperature over a shift: cooler in the morning, warmer in the afternoon (invented). */
function ambientAt(minute: number, randn: () => number): number {
  const inShift = (minute % DAY_MIN) / SHIFT_MIN
  return Math.round((21 + 3 * Math.sin(Math.PI * Math.min(1, inShift)) + 0.3 * randn()) * 10) / 10
}

function shuffle<T>(xs: T[], rand: () => number): T[] {
  const a = [...xs]
  for (let i = a.length - 1; i > 0; i--) {
    const j = Math.floor(rand() * (i + 1))
    ;[a[i], a[j]] = [a[j]!, a[i]!]
  }
  return a
}

/** The whole scenario for a seed: same seed, same units, same faults, same times. */
export function planScenario(seed = DEFAULT_SCENARIO_SEED): ScenarioPlan {
  const rand = mulberry32(seed)
  const randn = gaussian(rand)
  const units: PlannedUnit[] = []
  let recSeed = seed * 1000

  for (const p of PRODUCTS) {
    // Units of the product, lot by lot, each with its parts drawn around the nominal.
    const slots: { lotIndex: number; seq: number }[] = []
    p.lots.forEach((l, li) => {
      for (let s = 1; s <= l.units; s++) slots.push({ lotIndex: li, seq: s })
    })
    const parts = slots.map(() => {
      const d = { ...p.nominal }
      for (const key of Object.keys(d) as (keyof PhysicalDriver)[]) d[key] = p.nominal[key] * (1 + p.spread[key] * randn())
      return d
    })

    // Golden units: fault-free units from the first lot, tested first.
    const firstLot = slots.map((s, i) => (s.lotIndex === 0 ? i : -1)).filter((i) => i >= 0)
    const golden = new Set(shuffle(firstLot, rand).slice(0, GOLDEN_PER_PRODUCT))
    const unjudged = new Set(shuffle(firstLot.filter((i) => !golden.has(i)), rand).slice(0, p.unjudged))

    // Faults among the rest.
    const faultOf = new Map<number, Fault>()
    for (const f of p.faults) {
      const pool = slots.map((s, i) => i).filter((i) => !golden.has(i) && !unjudged.has(i) && !faultOf.has(i) && (f.lotIndex === undefined || slots[i]!.lotIndex === f.lotIndex))
      for (const i of shuffle(pool, rand).slice(0, f.count)) faultOf.set(i, f.fault)
    }

    const productUnits: PlannedUnit[] = slots.map((s, i) => ({
      serial: serialOf(p, s.lotIndex, s.seq),
      productCode: p.code,
      lotCode: lotCode(p, s.lotIndex),
      fault: faultOf.get(i) ?? null,
      golden: golden.has(i),
      tests: [],
    }))

    const sweepTest = (i: number, atMin: number, phase: TestPhase, fault: Fault | null, stationIndex: number, note: string | null = null): PlannedTest => {
      const ambientC = ambientAt(atMin, randn)
      const f = faulty(parts[i]!, fault, p.code)
      return {
        kind: 'sweep',
        station: p.stations[stationIndex % p.stations.length]!,
        atMin: Math.round(atMin * 10) / 10,
        ambientC,
        parts: f.parts,
        defect: f.defect,
        seed: ++recSeed,
        phase,
        by: rand() < 0.6 ? 'station' : 'technician',
        note,
        ...(fault === 'rubbing_coil' ? { rubBuzzPa: 0.02 + 0.06 * rand() } : {}),
      }
    }

    // Before the mask: golden units and the ones left unjudged, in the first two hours.
    const early = [...golden, ...unjudged]
    early.forEach((i, n) => {
      const at = 10 + (n * (MASK_RELEASE_AT_MIN - 30)) / early.length + 3 * rand()
      productUnits[i]!.tests.push(sweepTest(i, at, unjudged.has(i) ? 'before_mask' : 'golden', null, n, golden.has(i) ? 'golden unit' : null))
    })

    // Production: the rest, in serial order, over the shifts.
    const rest = slots.map((_, i) => i).filter((i) => !golden.has(i) && !unjudged.has(i))
    rest.forEach((i, n) => {
      const at = productionMinute((n + 0.2 + 0.6 * rand()) / rest.length)
      productUnits[i]!.tests.push(sweepTest(i, at, 'production', faultOf.get(i) ?? null, n))
    })

    // Retests: swapped leads re-soldered (now passes), a rubbing coil tried again (still rubs),
    // and good units scanned again by an operator.
    const retest = (i: number, fault: Fault | null, note: string) => {
      const first = productUnits[i]!.tests[0]!
      const at = Math.min(first.atMin + 20 + 60 * rand(), SPAN_MIN - 5)
      productUnits[i]!.tests.push(sweepTest(i, at, 'production', fault, p.stations.indexOf(first.station!), note))
    }
    const withFault = (f: Fault) => rest.filter((i) => faultOf.get(i) === f)
    for (const i of withFault('swapped_leads').slice(0, RETESTS.swappedLeadsReworked)) retest(i, null, 'leads re-soldered')
    for (const i of withFault('rubbing_coil').slice(0, RETESTS.rubbingRetested)) retest(i, 'rubbing_coil', 'retest after recentring')
    const good = rest.filter((i) => !faultOf.has(i))
    for (const i of shuffle(good, rand).slice(0, RETESTS.goodRescanned)) retest(i, null, 'scanned again')

    // Impedance tables from the lab's analyser: good units re-measured by the engineer.
    for (const i of shuffle(good, rand).slice(0, TABLES_PER_PRODUCT)) {
      const first = productUnits[i]!.tests[0]!
      const at = Math.min(first.atMin + 120 + 240 * rand(), SPAN_MIN - 5)
      productUnits[i]!.tests.push({
        kind: 'impedance_table',
        station: null,
        atMin: Math.round(at * 10) / 10,
        ambientC: 22.5,
        parts: parts[i]!,
        defect: 'none',
        seed: ++recSeed,
        phase: 'production',
        by: 'engineer',
        note: 'lab impedance audit',
      })
    }
    units.push(...productUnits)
  }
  return { units, maskReleaseAtMin: MASK_RELEASE_AT_MIN, spanMin: SPAN_MIN }
}

/** Counts of planted faults per product (for the report and the test). */
export function faultMix(plan: ScenarioPlan): Record<string, Partial<Record<Fault, number>> & { units: number }> {
  const out: Record<string, Partial<Record<Fault, number>> & { units: number }> = {}
  for (const u of plan.units) {
    const m = (out[u.productCode] ??= { units: 0 })
    m.units++
    if (u.fault) m[u.fault] = (m[u.fault] ?? 0) + 1
  }
  return out
}
