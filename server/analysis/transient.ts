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
export const BURST_HIGH = 0.2
export const BURST_LOW = 0.03
/** Envelope resolution: the peak of |residual| over this long (well under the gap between two excursion peaks of a 1 kHz drive). */
const ENVELOPE_S = 0.00025
/** An event with at most this many bursts is not locked to the drive: a transient (the "one or two bursts"). */
export const MAX_TRANSIENT_BURSTS = 2
/** Two bursts are locked to the drive when their spacing is within this share of a half-period of a whole number of half-periods (our tolerance). */
export const LOCK_TOLERANCE = 0.2
/** A knock's burst is cut out until it has stayed under the event threshold this long, on either side. */
const KNOCK_HOLD_S = 0.003

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
  /** Level of the part locked to the drive (all of a buzz; what a knock leaves of it), dB; null: none. */
  lockedLevelDb: number | null
}

/** Bursts in residual samples [a, b): rises above BURST_HIGH of the peak after a fall below BURST_LOW; the sample of each one's middle. */
export function findBursts(r: Float64Array, a: number, b: number, fs: number): number[] {
  const step = Math.max(1, Math.round(ENVELOPE_S * fs))
  const env: { at: number; m: number }[] = []
  let peak = 0
  for (let i = a; i < b; i += step) {
    let m = 0
    let at = i
    for (let j = i; j < Math.min(b, i + step); j++) {
      const v = Math.abs(r[j]!)
      if (v > m) {
        m = v
        at = j
      }
    }
    env.push({ at, m })
    peak = Math.max(peak, m)
  }
  if (!(peak > 0)) return []
  // Each burst's time is the centroid of its envelope's energy above BURST_LOW: a tone burst's
  // middle, where its loudest sample would land anywhere within it.
  const bursts: { sum: number; weight: number }[] = []
  let high = false
  for (const e of env) {
    if (!high && e.m > BURST_HIGH * peak) {
      bursts.push({ sum: 0, weight: 0 })
      high = true
    } else if (high && e.m < BURST_LOW * peak) high = false
    if (high) {
      const b = bursts[bursts.length - 1]!
      b.sum += e.m * e.m * e.at
      b.weight += e.m * e.m
    }
  }
  return bursts.map((x) => Math.round(x.sum / x.weight))
}

/**
 * Two bursts locked to the drive: spaced by one or two half-periods of the sweep between them (the
 * cone passes an excursion peak twice a cycle), within LOCK_TOLERANCE of a half-period.
 */
function lockedPair(t1: number, t2: number, freqAt: (sample: number) => number, fs: number): boolean {
  const halfPeriods = ((t2 - t1) / fs) * 2 * freqAt((t1 + t2) / 2)
  const m = Math.round(halfPeriods)
  return m >= 1 && m <= 2 && Math.abs(halfPeriods - m) <= LOCK_TOLERANCE
}

/**
 * Groups the blocks that stand EVENT_MARGIN_DB above the floor into events (runs of neighbouring
 * blocks) and finds each event's bursts over its blocks and one block either side. An event is a
 * transient when it holds one burst, or two not locked to the drive; three or more, or two a
 * half-period or a period apart, are the unit buzzing with its cone.
 * `freqAt`: the sweep's frequency at a sample of the residual.
 */
export function residualEvents(r: Float64Array, blocks: readonly ResidualBlock[], floorDb: number, fs: number, freqAt: (sample: number) => number): ResidualEvent[] {
  const loud = (i: number) => blocks[i]!.levelDb > floorDb + EVENT_MARGIN_DB
  const events: ResidualEvent[] = []
  const isLocked = (at: number[]) => at.length > MAX_TRANSIENT_BURSTS || (at.length === 2 && lockedPair(at[0]!, at[1]!, freqAt, fs))
  for (let i = 0; i < blocks.length; i++) {
    if (!loud(i)) continue
    const run: number[] = []
    while (i < blocks.length && loud(i)) run.push(i++)
    const first = blocks[Math.max(0, run[0]! - 1)]!
    const last = blocks[Math.min(blocks.length - 1, run[run.length - 1]! + 1)]!
    const worst = run.reduce((w, j) => (blocks[j]!.levelDb > blocks[w]!.levelDb ? j : w))
    const at = findBursts(r, first.start, last.end, fs)
    const locked = isLocked(at)
    const event: ResidualEvent = { blocks: run, levelDb: blocks[worst]!.levelDb, atS: blocks[worst]!.atS, bursts: at.length, transient: !locked, lockedLevelDb: locked ? blocks[worst]!.levelDb : null }
    if (!locked && at.length) event.lockedLevelDb = buzzUnder(r, blocks, run, first.start, last.end, at, floorDb, fs, isLocked)
    events.push(event)
  }
  return events
}

/**
 * A knock can fall on a unit that buzzes: with the knock's own burst cut out (until it has stayed
 * under the event threshold on either side of its peak), what is left of the event's blocks may still stand above
 * the floor and be locked to the drive. Returns that part's level, or null.
 */
function buzzUnder(
  r: Float64Array,
  blocks: readonly ResidualBlock[],
  run: readonly number[],
  a: number,
  b: number,
  bursts: readonly number[],
  floorDb: number,
  fs: number,
  isLocked: (at: number[]) => boolean,
): number | null {
  const rest = r.slice(a, b)
  // The residual's amplitude at the event threshold, from the loudest block's level and peak.
  const ref = blocks[run.reduce((w, j) => (blocks[j]!.levelDb > blocks[w]!.levelDb ? j : w))]!
  let refPeak = 0
  for (let i = ref.start; i < ref.end; i++) refPeak = Math.max(refPeak, Math.abs(r[i]!))
  const quietBelow = refPeak * Math.pow(10, (floorDb + EVENT_MARGIN_DB - ref.levelDb) / 20)
  const hold = Math.round(KNOCK_HOLD_S * fs)
  for (const p of bursts) {
    // The knock spans from where, going back from its peak, and to where, going on, it has stayed
    // under the event threshold for KNOCK_HOLD_S (the band limit spreads its onset a little too).
    let end = p
    for (let quiet = 0; end < b && quiet < hold; end++) quiet = Math.abs(r[end]!) < quietBelow ? quiet + 1 : 0
    let begin = p
    for (let quiet = 0; begin > a && quiet < hold; begin--) quiet = Math.abs(r[begin]!) < quietBelow ? quiet + 1 : 0
    rest.fill(0, begin - a, end - a)
  }
  let level: number | null = null
  for (const j of run) {
    const blk = blocks[j]!
    let orig = 0
    let left = 0
    for (let i = blk.start; i < blk.end; i++) {
      orig = Math.max(orig, Math.abs(r[i]!))
      left = Math.max(left, Math.abs(rest[i - a]!))
    }
    if (!(left > 0) || !(orig > 0)) continue
    const lv = blk.levelDb + 20 * Math.log10(left / orig)
    if (lv > floorDb + EVENT_MARGIN_DB && (level === null || lv > level)) level = lv
  }
  if (level === null) return null
  const at = findBursts(rest, 0, rest.length, fs).map((i) => i + a)
  return isLocked(at) ? level : null
}

/** The median of the blocks' levels: the residual's noise floor (a buzz or a knock fills few blocks). */
export function residualFloorDb(blocks: readonly ResidualBlock[]): number | null {
  const levels = blocks.map((b) => b.levelDb).filter(Number.isFinite).sort((x, y) => x - y)
  if (!levels.length) return null
  const mid = levels.length >> 1
  return levels.length % 2 ? levels[mid]! : (levels[mid - 1]! + levels[mid]!) / 2
}
