/** Worker thread of the render pool: renders planned tests to bytes, one message at a time. */
import { parentPort } from 'node:worker_threads'
import { renderTest } from './render.ts'
import { STATIONS, type PlannedTest } from './scenario.ts'

parentPort!.on('message', (msg: { id: number; test: PlannedTest }) => {
  try {
    const { bytes, ext } = renderTest(msg.test, STATIONS)
    const copy = new Uint8Array(bytes.byteLength)
    copy.set(bytes)
    parentPort!.postMessage({ id: msg.id, bytes: copy, ext }, [copy.buffer])
  } catch (err) {
    parentPort!.postMessage({ id: msg.id, error: err instanceof Error ? err.message : String(err) })
  }
})
