/**
 * Invented returns for the demo: which units come back, why, what the re-test finds and
 * how support closes them. Pure data over the scenario plan; seeds/03-demo-returns.ts stores it.
 * Every customer, reference and story here is invented.
 */
import type { Disposition } from '../../shared/types/returns.ts'
import type { Defect } from '../../fixtures/generator.ts'
import type { PhysicalDriver, PlannedUnit, ScenarioPlan } from './scenario.ts'

export interface DemoReturn {
  serial: string
  /** Days before the seed runs that the unit arrived. */
  receivedDaysAgo: number
  customerRef: string
  /** A label of the migration's starter list. */
  category: string
  complaint: string
  /** The re-test: the unit's parts as they are now, and a generator defect. Null: not re-tested yet. */
  retest: { parts: PhysicalDriver; defect: Defect; seed: number; ambientC: number } | null
  close: { disposition: Disposition; cause?: string; causeClass?: string; note?: string } | null
}

/** A suspension softened by hard use (invented sizes): compliance up 45 % (Fs about −17 %), losses up 40 % (Qms down). */
const FATIGUE_CMS_FACTOR = 1.45
const FATIGUE_RMS_FACTOR = 1.4
/** Recording seeds of the re-tests: above the scenario's own (seed × 1000 + a few hundred). */
const RETEST_SEED_BASE = 9_100_000

function pick(plan: ScenarioPlan, productCode: string, nth: number): PlannedUnit {
  const candidates = plan.units.filter((u) => u.productCode === productCode && !u.golden && u.fault === null && u.tests.length === 1 && u.tests[0]!.kind === 'sweep')
  const u = candidates[nth]
  if (!u) throw new Error(`demo returns: no unit ${nth} of ${productCode}`)
  return u
}

export function planReturns(plan: ScenarioPlan): DemoReturn[] {
  const tired = pick(plan, 'W130-8', 3)
  const burnt = pick(plan, 'W165-8', 5)
  const fine = pick(plan, 'W165-8', 11)
  const dropped = pick(plan, 'F100-4', 2)
  const parts = (u: PlannedUnit) => u.tests[0]!.parts
  return [
    {
      serial: tired.serial,
      receivedDaysAgo: 1,
      customerRef: 'RMA-24-0192',
      category: 'Distorted sound / buzzing',
      complaint: 'Bass sounds loose and flabby since an outdoor event; buzzes on loud low notes.',
      retest: { parts: { ...parts(tired), cmsMPerN: parts(tired).cmsMPerN * FATIGUE_CMS_FACTOR, rmsKgPerS: parts(tired).rmsKgPerS * FATIGUE_RMS_FACTOR }, defect: 'none', seed: RETEST_SEED_BASE + 1, ambientC: 22.5 },
      close: null,
    },
    {
      serial: burnt.serial,
      receivedDaysAgo: 2,
      customerRef: 'RMA-24-0187',
      category: 'No sound',
      complaint: 'Went silent during a party; a burnt smell from the cabinet.',
      retest: { parts: parts(burnt), defect: 'open_coil', seed: RETEST_SEED_BASE + 2, ambientC: 22 },
      close: { disposition: 'confirmed_defect', causeClass: 'coil', cause: 'Voice coil burnt open by overload (amplifier clipping at full volume).' },
    },
    {
      serial: fine.serial,
      receivedDaysAgo: 2,
      customerRef: 'RMA-24-0188',
      category: 'Low output',
      complaint: 'Quieter than the other speaker of the pair.',
      retest: { parts: parts(fine), defect: 'none', seed: RETEST_SEED_BASE + 3, ambientC: 21.5 },
      close: { disposition: 'no_fault_found', note: 'Same as at the factory; the other speaker of the pair was wired with a crossover fault.' },
    },
    {
      serial: dropped.serial,
      receivedDaysAgo: 0,
      customerRef: 'Dealer claim 7731',
      category: 'Physical damage',
      complaint: 'Dust cap dented on arrival; box crushed in transport.',
      retest: null,
      close: null,
    },
  ]
}
