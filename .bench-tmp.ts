import { readFileSync } from 'node:fs'
import { analyzeRecording, DEFAULT_PROFILE } from './server/analysis/index.ts'
const b = new Uint8Array(readFileSync('/work/shared/samples/S6-00-0004.wav'))
const acc: Record<string, number[]> = {}
for (let i = 0; i < 60; i++) { const r = analyzeRecording(b, DEFAULT_PROFILE); if (i >= 10) for (const [k, v] of Object.entries(r.timingsMs)) (acc[k] ??= []).push(v) }
for (const [k, v] of Object.entries(acc)) { v.sort((a, b) => a - b); console.log(k, v[v.length >> 1]!.toFixed(2)) }
