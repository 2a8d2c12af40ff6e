import type { CoilInput } from '#shared/utils/coil'
import type { ProductListItem, ProductCreateInput } from '#shared/utils/product'
import { DEFAULT_RETEST_LIMIT } from '#shared/utils/verdict'
import { DEFAULT_FALSE_REJECT_MAX_PCT, FLOOR_NAMES, type FloorName, type LimitFloors } from '#shared/utils/mask'

/** What the coil fields hold while the engineer types (number inputs give '' when empty). */
export interface CoilDraft {
  awg: number
  by: 'turns' | 'length'
  turns: number | ''
  meanDiameterMm: number | ''
  lengthM: number | ''
  layers: number | ''
  strands: number | ''
}

export interface ProductDraft {
  code: string
  name: string
  ratedImpedanceOhm: number | ''
  nominalSize: string
  bandLowHz: number | ''
  bandHighHz: number | ''
  reWarnPct: number | ''
  retestLimit: number | ''
  hasCoil: boolean
  coil: CoilDraft
  /** One entry per floor; '' (an empty input): the default floor. */
  floors: Record<FloorName, number | ''>
  /** '' (an empty input): the default threshold. */
  falseRejectMaxPct: number | ''
}

const num = (v: number | '' | null | undefined) => (v === '' || v === null || v === undefined ? undefined : Number(v))

/** The floor fields of a draft: the product's own floors, empty where it uses the default. */
function floorsDraft(floors: LimitFloors = {}): Record<FloorName, number | ''> {
  return Object.fromEntries(FLOOR_NAMES.map((n) => [n, floors[n] ?? ''])) as Record<FloorName, number | ''>
}

/** Only the floors the engineer filled in: an empty field goes back to its default. */
export function floorsOfDraft(floors: Record<FloorName, number | ''>): LimitFloors {
  return Object.fromEntries(FLOOR_NAMES.flatMap((n) => (num(floors[n]) === undefined ? [] : [[n, num(floors[n])]]))) as LimitFloors
}

/** A new product's starting values: a four-layer 31 AWG coil, the band the engine averages over by default (300–3000 Hz). */
export function newProductDraft(): ProductDraft {
  return {
    code: '',
    name: '',
    ratedImpedanceOhm: 8,
    nominalSize: '',
    bandLowHz: 300,
    bandHighHz: 3000,
    reWarnPct: 10,
    retestLimit: DEFAULT_RETEST_LIMIT,
    hasCoil: false,
    coil: { awg: 31, by: 'turns', turns: '', meanDiameterMm: '', lengthM: '', layers: 4, strands: 1 },
    floors: floorsDraft(),
    falseRejectMaxPct: '',
  }
}

export function draftOfProduct(p: ProductListItem): ProductDraft {
  const c = p.coil
  return {
    code: p.code,
    name: p.name,
    ratedImpedanceOhm: p.ratedImpedanceOhm,
    nominalSize: p.nominalSize,
    bandLowHz: p.sensitivityBandHz[0],
    bandHighHz: p.sensitivityBandHz[1],
    reWarnPct: p.reWarnPct,
    retestLimit: p.retestLimit,
    hasCoil: c !== null,
    coil: c
      ? { awg: c.awg, by: c.lengthM !== undefined ? 'length' : 'turns', turns: c.turns ?? '', meanDiameterMm: c.meanDiameterMm ?? '', lengthM: c.lengthM ?? '', layers: c.layers, strands: c.strands }
      : newProductDraft().coil,
    floors: floorsDraft(p.limitFloors),
    // The default threshold shows as an empty field (its placeholder), like a default floor.
    falseRejectMaxPct: p.falseRejectMaxPct === DEFAULT_FALSE_REJECT_MAX_PCT ? '' : p.falseRejectMaxPct,
  }
}

/** The coil part of a draft as the API takes it (only the fields of the chosen way of giving the wire). */
export function coilOfDraft(c: CoilDraft): CoilInput {
  const wire = c.by === 'length' ? { lengthM: num(c.lengthM) } : { turns: num(c.turns), meanDiameterMm: num(c.meanDiameterMm) }
  return { awg: c.awg, layers: num(c.layers)!, strands: num(c.strands), ...wire }
}

/** The body of POST /api/products (and of PATCH, which takes the same fields). */
export function bodyOfDraft(d: ProductDraft): ProductCreateInput {
  const low = num(d.bandLowHz)
  const high = num(d.bandHighHz)
  return {
    code: d.code.trim(),
    name: d.name,
    ratedImpedanceOhm: num(d.ratedImpedanceOhm)!,
    nominalSize: d.nominalSize,
    sensitivityBandHz: low === undefined && high === undefined ? undefined : [low!, high!],
    coil: d.hasCoil ? coilOfDraft(d.coil) : null,
    reWarnPct: num(d.reWarnPct),
    retestLimit: num(d.retestLimit),
    // Sent whole on every save (PATCH replaces the floors): a cleared field is a default again.
    limitFloors: floorsOfDraft(d.floors),
    falseRejectMaxPct: num(d.falseRejectMaxPct) ?? DEFAULT_FALSE_REJECT_MAX_PCT,
  }
}
