import { readFileSync } from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { DEFAULT_PROFILE, stationProfileSchema, type StationProfile, type StationProfileInput } from '../../../server/analysis/index.ts'

export const projectRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..')
/** Reference recordings made outside the project (independent driver model), see their README. */
export const samplesDir = path.resolve(projectRoot, '../shared/samples')

export function readSample(name: string): Uint8Array {
  return new Uint8Array(readFileSync(path.join(samplesDir, name)))
}

export interface TruthFile {
  params: { Re: number; Le: number; Fs: number; Qms: number; Qes: number; Qts: number }
  Zmax_ohm: number | null
  impedance: { Zmax_ohm: number; Zmin_above_Fs_ohm: number; f_Zmin_hz: number } | null
  spl_third_octave_db: [number, number][] | null
  mean_spl_300_3000_db: number | null
  thd: Record<string, { thd_percent: number; h2_percent: number; h3_percent: number }> | null
}

export function readTruth(): Record<string, TruthFile> {
  return JSON.parse(readFileSync(path.join(samplesDir, 'truth.json'), 'utf8')).files
}

export function profileWith(over: StationProfileInput): StationProfile {
  return stationProfileSchema.parse({ ...DEFAULT_PROFILE, ...over })
}

/** |a − b| / |b| */
export function relErr(a: number | null | undefined, b: number): number {
  if (a === null || a === undefined) return Number.POSITIVE_INFINITY
  return Math.abs(a - b) / Math.abs(b)
}
