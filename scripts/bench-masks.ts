/**
 * Benchmark of the mask proposal and the judge, pure (no database): an invented population of an
 * 8 Ω woofer with a response on the standard grid to 20 kHz. Prints the median ms of one proposal
 * from 12 and from 200 golden units, of one judgement, and what a release's preview of 2 000 units
 * costs in judgements (each unit judged by the draft and by the active mask), and ends with
 * `masks propose12_ms=<x> propose200_ms=<y> judge_ms=<z> preview2000_ms=<w>`.
 */
import { gaussian, mulberry32 } from '../fixtures/generator.ts'
import { standardGrid } from '../server/analysis/index.ts'
import { proposeMask } from '../server/limits/propose.ts'
import { judge, type Judgeable } from '../server/verdict/judge.ts'

const GRID = standardGrid(20_000)
const randn = gaussian(mulberry32(2026))

function unit(): Judgeable {
  const re = 6.4 * (1 + 0.01 * randn())
  const level = 0.4 * randn()
  return {
    kind: 'sweep',
    parameters: {
      reOhm: re, re20Ohm: re, fsHz: 42 * (1 + 0.04 * randn()), qts: 0.41 * (1 + 0.05 * randn()), qms: 4.5 * (1 + 0.06 * randn()),
      qes: 0.45 * (1 + 0.05 * randn()), leMh: 0.9 * (1 + 0.05 * randn()), sensitivityDb: 88 + level, thdMaxPct: 0.6 * Math.exp(0.2 * randn()),
      rubBuzzDb: -55 + 2 * randn(), zminOhm: 7.2, effectiveImpedanceOhm: 9,
    },
    flags: { polarity: 'normal', openCoil: false, shortedCoil: false },
    curves: { freqHz: GRID, splDb: GRID.map((f) => 88 + level - 10 * Math.log10(1 + Math.pow(42 / f, 4)) + 0.1 * randn()), impedanceOhm: null },
  }
}

function medianMs(runs: number, fn: () => void): number {
  for (let i = 0; i < Math.min(10, runs); i++) fn()
  const ts: number[] = []
  for (let i = 0; i < runs; i++) {
    const t = performance.now()
    fn()
    ts.push(performance.now() - t)
  }
  ts.sort((a, b) => a - b)
  return ts[ts.length >> 1]!
}

const golden12 = Array.from({ length: 12 }, unit)
const golden200 = Array.from({ length: 200 }, unit)
const production = Array.from({ length: 2000 }, unit)
const { limits } = proposeMask(golden12, { sweepBandHz: [20, 20_000] })

const propose12 = medianMs(200, () => proposeMask(golden12, { sweepBandHz: [20, 20_000] }))
const propose200 = medianMs(40, () => proposeMask(golden200, { sweepBandHz: [20, 20_000] }))
let i = 0
const judgeMs = medianMs(4000, () => judge(production[i++ % production.length]!, limits, 8))
const preview = medianMs(5, () => {
  for (const u of production) {
    judge(u, limits, 8)
    judge(u, limits, 8)
  }
})
console.log(`grid: ${GRID.length} points to 20 kHz; limits: ${Object.keys(limits.scalars).length} scalars and the response curve`)
console.log(`masks propose12_ms=${propose12.toFixed(2)} propose200_ms=${propose200.toFixed(2)} judge_ms=${judgeMs.toFixed(3)} preview2000_ms=${preview.toFixed(0)}`)
