/** Turns a planned test into the bytes a station (or the lab's analyser) would upload. Pure and seeded. */
import { generateImpedanceTable, generateRecording } from '../../fixtures/generator.ts'
import { toDriverModel, type PlannedTest, type DemoStation } from './scenario.ts'

/** Table layouts the lab's analyser is seen to export (separator, header), picked by the seed. */
const TABLE_LAYOUTS = [
  { separator: ',', header: true },
  { separator: '\t', header: true },
  { separator: ';', header: false, decimalComma: true },
] as const

export function renderTest(t: PlannedTest, stations: readonly DemoStation[]): { bytes: Buffer; ext: 'wav' | 'csv' | 'txt' } {
  const driver = toDriverModel(t.parts, t.ambientC)
  if (t.kind === 'impedance_table') {
    const layout = TABLE_LAYOUTS[t.seed % TABLE_LAYOUTS.length]!
    const text = generateImpedanceTable({ driver, noise: 0.002, seed: t.seed, points: 240, ...layout })
    return { bytes: Buffer.from(text, 'utf8'), ext: layout.separator === ',' ? 'csv' : 'txt' }
  }
  const station = stations.find((s) => s.name === t.station)
  if (!station) throw new Error(`demo plan names an unknown station ${t.station}`)
  const bytes = generateRecording({
    driver,
    defect: t.defect,
    seed: t.seed,
    profile: station.profile,
    ...(t.rubBuzzPa !== undefined ? { rubBuzzPa: t.rubBuzzPa } : {}),
  })
  return { bytes, ext: 'wav' }
}
