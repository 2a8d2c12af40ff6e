/**
 * Benchmark of the measurement engine: a 3-channel, 48 kHz, 1.35 s, 24-bit recording analysed
 * many times. Prints the median ms per recording, the median ms of each stage (the result's
 * timingsMs: validate, condition, deconvolve, impedance, fit, response, distortion, rubBuzz, total;
 * see server/analysis/analyze.ts), the ms of one real FFT of the padded length, their ratio, and
 * ends with `analysis median_ms=<x> fft_ms=<y> ratio=<z>`.
 */
import { analyzeRecording, DEFAULT_PROFILE, nextPowerOfTwo, rfft } from '../server/analysis/index.ts'
import { generateRecording } from '../fixtures/generator.ts'

const WARMUP = 15
const RUNS = 60

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b)
  const m = s.length >> 1
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!)
}

const bytes = generateRecording({ seed: 2024, sampleRate: 48_000, encoding: 'pcm24', postSilenceS: 0.3 })
const frames = Math.round(1.35 * 48_000)
const n = nextPowerOfTwo(frames)

for (let i = 0; i < WARMUP; i++) analyzeRecording(bytes, DEFAULT_PROFILE)
const totals: number[] = []
const stages: Record<string, number[]> = {}
for (let i = 0; i < RUNS; i++) {
  const t = performance.now()
  const r = analyzeRecording(bytes, DEFAULT_PROFILE)
  totals.push(performance.now() - t)
  for (const [k, v] of Object.entries(r.timingsMs)) (stages[k] ??= []).push(v)
}

const x = new Float64Array(frames).map((_, i) => Math.sin(i * 0.01))
for (let i = 0; i < 50; i++) rfft(x, n)
const fftTimes: number[] = []
for (let i = 0; i < 200; i++) {
  const t = performance.now()
  rfft(x, n)
  fftTimes.push(performance.now() - t)
}

const med = median(totals)
const fftMs = median(fftTimes)
console.log(`recording: 3 channels, 48 kHz, 1.35 s, 24-bit (${bytes.length} bytes); padded FFT length ${n}`)
console.log(`runs: ${RUNS} after ${WARMUP} warm-up; min ${Math.min(...totals).toFixed(2)} ms, max ${Math.max(...totals).toFixed(2)} ms`)
console.log('median per stage (ms): ' + Object.entries(stages).map(([k, v]) => `${k} ${median(v).toFixed(2)}`).join(', '))
console.log(`analysis median_ms=${med.toFixed(2)} fft_ms=${fftMs.toFixed(3)} ratio=${(med / fftMs).toFixed(1)}`)
