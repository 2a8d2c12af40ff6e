/**
 * Renders planned tests on worker threads, so the generator (the costliest step of the seed) runs
 * beside the analysis on the main thread. Falls back to rendering in-process when a worker cannot
 * start (e.g. a loader without TypeScript support).
 */
import { availableParallelism } from 'node:os'
import { Worker } from 'node:worker_threads'
import { renderTest } from './render.ts'
import { STATIONS, type PlannedTest } from './scenario.ts'

export interface Rendered {
  bytes: Buffer
  ext: 'wav' | 'csv' | 'txt'
}

interface Reply {
  id: number
  bytes?: Uint8Array
  ext?: Rendered['ext']
  error?: string
}

export interface RenderPool {
  render(test: PlannedTest): Promise<Rendered>
  close(): Promise<void>
}

export function createRenderPool(size = Math.max(1, Math.min(2, availableParallelism()))): RenderPool {
  const waiting = new Map<number, { test: PlannedTest; ok: (r: Rendered) => void; fail: (e: Error) => void }>()
  let nextId = 0
  let workers: Worker[] = []
  let broken = false
  try {
    // Each worker registers the TypeScript loader (tsx) before importing its module: a plain
    // `--import tsx` is not applied in time to a worker's entry point on Node 20.
    const tsxApi = import.meta.resolve('tsx/esm/api')
    const entry = new URL('./render-worker.ts', import.meta.url).href
    const boot = `import(${JSON.stringify(tsxApi)}).then((m) => { m.register(); return import(${JSON.stringify(entry)}) })`
    workers = Array.from({ length: size }, () => new Worker(boot, { eval: true }))
  } catch {
    broken = true
  }
  const inProcess = (id: number) => {
    const w = waiting.get(id)
    if (!w) return
    waiting.delete(id)
    try {
      w.ok(renderTest(w.test, STATIONS))
    } catch (err) {
      w.fail(err instanceof Error ? err : new Error(String(err)))
    }
  }
  const busy = new Map<Worker, number[]>()
  for (const w of workers) {
    busy.set(w, [])
    w.on('message', (m: Reply) => {
      busy.set(w, busy.get(w)!.filter((id) => id !== m.id))
      const entry = waiting.get(m.id)
      if (!entry) return
      waiting.delete(m.id)
      if (m.error !== undefined || !m.bytes) entry.fail(new Error(m.error ?? 'render failed'))
      else entry.ok({ bytes: Buffer.from(m.bytes.buffer, m.bytes.byteOffset, m.bytes.byteLength), ext: m.ext! })
    })
    w.on('error', () => {
      // A worker that cannot run: render what it held here, and stop using workers.
      broken = true
      for (const id of busy.get(w) ?? []) inProcess(id)
      busy.set(w, [])
    })
  }
  return {
    render(test) {
      return new Promise<Rendered>((ok, fail) => {
        const id = nextId++
        waiting.set(id, { test, ok, fail })
        if (broken || workers.length === 0) return setImmediate(() => inProcess(id))
        // The least busy worker takes it.
        const w = workers.reduce((a, b) => (busy.get(b)!.length < busy.get(a)!.length ? b : a))
        busy.get(w)!.push(id)
        w.postMessage({ id, test })
      })
    },
    async close() {
      await Promise.all(workers.map((w) => w.terminate()))
    },
  }
}
