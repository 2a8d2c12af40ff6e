import { nextPowerOfTwo } from './fft.ts'

/**
 * Arrays of N doubles (N: the transform length, the recording's frames rounded up to a power of
 * two) that the engine holds at its peak for one recording, besides the decoded channels: each
 * channel's spectrum, the stimulus, the divisions and impulse responses, the rub-and-buzz residual,
 * and the transforms' plans and scratch. Measured with scripts/bench-load.ts and a plain analysis of
 * 64 MB recordings (192 kHz 32-bit and 48 kHz 64-bit float, 3 channels): the peak resident memory
 * less the idle process is 20 to 21 of them; one more for the garbage not yet collected.
 */
export const ANALYSIS_WORKING_ARRAYS = 22

/** Bytes one recording's analysis needs at its peak, from its frames and channels (see ANALYSIS_WORKING_ARRAYS). */
export function analysisMemoryBytes(frames: number, channels: number): number {
  return 8 * (frames * channels + ANALYSIS_WORKING_ARRAYS * nextPowerOfTwo(Math.max(frames, 2)))
}
