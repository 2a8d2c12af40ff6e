/**
 * Benchmark of the measurement engine: a 3-channel, 48 kHz, 1.35 s, 24-bit recording analysed
 * many times. Prints the median ms per recording, the median ms of each stage (the result's
 * timingsMs: validate, condition, deconvolve, impedance, fit, response, distortion, rubBuzz, total;
 * see server/analysis/analyze.ts), the ms of one real FFT of the padded length, their ratio, and
 * ends with `analysis median_ms=<x> fft_ms=<y> ratio=<z>`.
 *
 * The runs come in ROUNDS rounds with a pause between them, and each analysis is followed by one
 * FFT timed the same way: a virtual machine's host may slow it down for seconds at a time, so the
 * per-round medians show whether that happened, and the ratio (median of analysis over FFT, pair
 * by pair) stays meaningful when it did.
 */
import { analyzeRecording, DEFAULT_PROFILE, nextPowerOfTwo, rfft } from '../server/analysis/index.ts'
import { generateRecording } from '../fixtures/generator.ts'

const WARMUP = 15
const ROUNDS = 5
const RUNS_PER_ROUND = 40
const PAUSE_MS = 1000

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b)
  const m = s.length >> 1
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!)
}

const bytes = generateRecording({ seed: 2024, sampleRate: 48_000, encoding: 'pcm24', postSilenceS: 0.3 })
const frames = Math.round(1.35 * 48_000)
const n = nextPowerOfTwo(frames)
const x = new Float64Array(frames).map((_, i) => Math.sin(i * 0.01))

for (let i = 0; i < WARMUP; i++) {
  analyzeRecording(bytes, DEFAULT_PROFILE)
  rfft(x, n)
}
const totals: number[] = []
const ffts: number[] = []
const ratios: number[] = []
const roundMedians: number[] = []
const stages: Record<string, number[]> = {}
for (let round = 0; round < ROUNDS; round++) {
  if (round > 0) await new Promise((done) => setTimeout(done, PAUSE_MS))
  const inRound: number[] = []
  for (let i = 0; i < RUNS_PER_ROUND; i++) {
    let t = performance.now()
    const r = analyzeRecording(bytes, DEFAULT_PROFILE)
    const total = performance.now() - t
    t = performance.now()
    rfft(x, n)
    const fft = performance.now() - t
    totals.push(total)
    inRound.push(total)
    ffts.push(fft)
    ratios.push(total / fft)
    for (const [k, v] of Object.entries(r.timingsMs)) (stages[k] ??= []).push(v)
  }
  roundMedians.push(median(inRound))
}

const med = median(totals)
console.log(`recording: 3 channels, 48 kHz, 1.35 s, 24-bit (${bytes.length} bytes); padded FFT length ${n}`)
console.log(`runs: ${ROUNDS} rounds of ${RUNS_PER_ROUND} after ${WARMUP} warm-up; min ${Math.min(...totals).toFixed(2)} ms, max ${Math.max(...totals).toFixed(2)} ms`)
console.log(`median per round (ms): ${roundMedians.map((m) => m.toFixed(2)).join(', ')}`)
console.log('median per stage (ms): ' + Object.entries(stages).map(([k, v]) => `${k} ${median(v).toFixed(2)}`).join(', '))
console.log(`analysis median_ms=${med.toFixed(2)} fft_ms=${median(ffts).toFixed(3)} ratio=${median(ratios).toFixed(1)}`)
