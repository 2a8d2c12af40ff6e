/**
 * The budget behind the server's upload slots and the worker's analysis memory
 * (server/utils/capacity.ts), and the engine's estimate of one recording's memory.
 */
import { describe, expect, it } from 'vitest'
import { Capacity, positiveIntFromEnv } from '../../server/utils/capacity'
import { analysisMemoryBytes, ANALYSIS_WORKING_ARRAYS } from '../../server/analysis/index'

const MB = 1024 * 1024
const tick = () => new Promise((r) => setTimeout(r, 0))

describe('Capacity', () => {
  it('grants shares while they fit and refuses the next one without waiting', () => {
    const slots = new Capacity(8)
    const held = Array.from({ length: 8 }, () => slots.tryTake(1))
    expect(held.every((r) => typeof r === 'function')).toBe(true)
    expect(slots.tryTake(1)).toBeNull() // the 9th
    held[3]!()
    expect(slots.inUse).toBe(7)
    const ninth = slots.tryTake(1)
    expect(ninth).not.toBeNull()
    expect(slots.tryTake(1)).toBeNull()
  })

  it('releases a share once, however often its release is called', () => {
    const slots = new Capacity(2)
    const a = slots.tryTake(1)!
    a()
    a()
    expect(slots.inUse).toBe(0)
    expect(slots.tryTake(2)).not.toBeNull()
  })

  it('makes a large share wait until it fits, and lets it run alone when it exceeds the whole budget', async () => {
    const memory = new Capacity(512 * MB)
    const small = await memory.take(100 * MB)
    let bigStarted = false
    const big = memory.take(1500 * MB).then((release) => {
      bigStarted = true
      return release
    })
    await tick()
    expect(bigStarted).toBe(false)
    // Work arriving after the big one waits behind it, even though it would fit now.
    let laterStarted = false
    const later = memory.take(10 * MB).then((release) => {
      laterStarted = true
      return release
    })
    await tick()
    expect(laterStarted).toBe(false)
    small()
    const releaseBig = await big
    expect(bigStarted).toBe(true)
    expect(memory.inUse).toBe(1500 * MB)
    await tick()
    expect(laterStarted).toBe(false)
    releaseBig()
    ;(await later)()
    expect(laterStarted).toBe(true)
    expect(memory.inUse).toBe(0)
  })

  it('reads a positive whole number from the environment, or falls back', () => {
    expect(positiveIntFromEnv('8', 16)).toBe(8)
    for (const bad of [undefined, '', '0', '-2', '1.5', 'many']) expect(positiveIntFromEnv(bad, 16)).toBe(16)
  })
})

describe('analysisMemoryBytes', () => {
  it('counts the decoded channels and the working arrays of the transform length', () => {
    // 48 kHz, 1.35 s, 3 channels: 64 800 frames, transforms of 65 536.
    expect(analysisMemoryBytes(64_800, 3)).toBe(8 * (64_800 * 3 + ANALYSIS_WORKING_ARRAYS * 65_536))
    expect(analysisMemoryBytes(64_800, 3)).toBeLessThan(16 * MB)
    // 192 kHz, 29 s, 3 channels (a 64 MB file): transforms of 8 388 608, about 1.5 GB.
    const big = analysisMemoryBytes(5_577_600, 3)
    expect(big).toBeGreaterThan(1400 * MB)
    expect(big).toBeLessThan(1600 * MB)
  })
})
