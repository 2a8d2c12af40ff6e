/**
 * A copy of a generated recording that differs in the least significant bits of its last two
 * samples (the data chunk ends the file): every copy is a new file (the same bytes are refused for
 * a second unit) without generating a new sweep, and the change, below 2^-15 of full scale in the
 * silence after the sweep, is lost in the noise. Same idea as scripts/bench-ingest.ts.
 */
export function recordingVariant(wav: Uint8Array, n: number): Uint8Array<ArrayBuffer> {
  const copy = new Uint8Array(new ArrayBuffer(wav.length))
  copy.set(wav)
  copy[copy.length - 3] = n & 0xff
  copy[copy.length - 6] = (n >> 8) & 0xff
  return copy
}
