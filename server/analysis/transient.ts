/**
 * Rub and buzz or a knock? Both leave a high-order residual, but a rubbing coil or a loose part
 * buzzes with the cone: a burst at each excursion peak, cycle after cycle while the sweep moves the
 * cone far. A knock near the station (a dropped tool, a door) is one burst, or two, not locked to the
 * drive. The residual's envelope around each run of loud blocks tells them apart by its bursts.
 */

/** One block of the rub-and-buzz scan: samples [start, end) of the residual, its level and time. */
export interface ResidualBlock {
  start: number
  end: number
  /** Peak residual over the mic's peak, dB. */
  levelDb: number
  /** Seconds into the sweep at the block's middle. */
  atS: number
}

/** An event is a run of blocks this far above the residual's noise floor (our margin: 12 dB, four times the floor's amplitude). */
export const EVENT_MARGIN_DB = 12
/**
 * Bursts: the envelope rises above this share of the event's peak after falling below the lower one
 * (a hysteresis wide enough that the ragged decay of one knock counts once).
 */
export const BURST_HIGH = 0.5
export const BURST_LOW = 0.1
/** Envelope resolution: the peak of |residual| over this long (well under the gap between two excursion peaks of a 1 kHz drive). */
const ENVELOPE_S = 0.00025
/** An event with at most this many bursts is not locked to the drive: a transient (the "one or two bursts"). */
export const MAX_TRANSIENT_BURSTS = 2

export interface ResidualEvent {
  /** Indices of its blocks. */
  blocks: number[]
  /** Its loudest block's level, dB. */
  levelDb: number
  /** Seconds into the sweep of its loudest block. */
  atS: number
  bursts: number
  /** Not locked to the drive: one or two bursts. */
  transient: boolean
}

/** Bursts in residual samples [a, b): rises above BURST_HIGH of the peak after a fall below BURST_LOW. */
export function countBursts(r: Float64Array, a: number, b: number, fs: number): number {
  const step = Math.max(1, Math.round(ENVELOPE_S * fs))
  const env: number[] = []
  let peak = 0
  for (let i = a; i < b; i += step) {
    let m = 0
    for (let j = i; j < Math.min(b, i + step); j++) m = Math.max(m, Math.abs(r[j]!))
    env.push(m)
    peak = Math.max(peak, m)
  }
  if (!(peak > 0)) return 0
  let bursts = 0
  let high = false
  for (const e of env) {
    if (!high && e > BURST_HIGH * peak) {
      bursts++
      high = true
    } else if (high && e < BURST_LOW * peak) high = false
  }
  return bursts
}

/**
 * Groups the blocks that stand EVENT_MARGIN_DB above the floor into events (runs of neighbouring
 * blocks) and counts each event's bursts over its blocks and one block either side.
 */
export function residualEvents(r: Float64Array, blocks: readonly ResidualBlock[], floorDb: number, fs: number): ResidualEvent[] {
  const loud = (i: number) => blocks[i]!.levelDb > floorDb + EVENT_MARGIN_DB
  const events: ResidualEvent[] = []
  for (let i = 0; i < blocks.length; i++) {
    if (!loud(i)) continue
    const run: number[] = []
    while (i < blocks.length && loud(i)) run.push(i++)
    const first = blocks[Math.max(0, run[0]! - 1)]!
    const last = blocks[Math.min(blocks.length - 1, run[run.length - 1]! + 1)]!
    const worst = run.reduce((w, j) => (blocks[j]!.levelDb > blocks[w]!.levelDb ? j : w))
    const bursts = countBursts(r, first.start, last.end, fs)
    events.push({ blocks: run, levelDb: blocks[worst]!.levelDb, atS: blocks[worst]!.atS, bursts, transient: bursts <= MAX_TRANSIENT_BURSTS })
  }
  return events
}

/** The median of the blocks' levels: the residual's noise floor (a buzz or a knock fills few blocks). */
export function residualFloorDb(blocks: readonly ResidualBlock[]): number | null {
  const levels = blocks.map((b) => b.levelDb).filter(Number.isFinite).sort((x, y) => x - y)
  if (!levels.length) return null
  const mid = levels.length >> 1
  return levels.length % 2 ? levels[mid]! : (levels[mid - 1]! + levels[mid]!) / 2
}
