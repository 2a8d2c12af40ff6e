import { spawn, type ChildProcess } from 'node:child_process'
import { resolve } from 'node:path'
import { inject } from 'vitest'
import { TEST_QUEUE_ENV } from '../global-setup'

const root = resolve(import.meta.dirname, '../..')

export interface RunningWorker {
  proc: ChildProcess
  /** Resolves once the worker listens for jobs. */
  ready: Promise<void>
  /** Resolves with the recording id when a stalling worker reaches its stall. */
  stalled: Promise<number>
  stop(signal?: NodeJS.Signals): Promise<void>
}

export interface WorkerOptions {
  /** Stall on every job before analysing it (kept for older tests: same as `stall: 'before'`). */
  hang?: boolean
  /** Stall at a point (tests/support/worker-entry.ts), so the test can kill the worker there. */
  stall?: 'before' | 'after'
}

/**
 * Starts the analysis worker against the test database, as npm start does: workers/analyze.ts
 * itself, or the test entry wrapping it when a stall is asked for.
 */
export function startWorker(opts: WorkerOptions = {}): RunningWorker {
  const stall = opts.stall ?? (opts.hang ? 'before' : undefined)
  const entry = stall ? 'tests/support/worker-entry.ts' : 'workers/analyze.ts'
  const proc = spawn(process.execPath, ['--import', 'tsx', resolve(root, entry)], {
    cwd: root,
    stdio: ['ignore', 'pipe', 'inherit'],
    env: {
      ...process.env,
      ...TEST_QUEUE_ENV,
      DATABASE_URL: inject('databaseUrl'),
      CONETRAIL_DATA_DIR: inject('dataDir'),
      CONETRAIL_TEST_WORKER_STALL: stall ?? '',
    },
  })
  let out = ''
  const ready = new Promise<void>((ok, fail) => {
    proc.stdout!.on('data', (chunk: Buffer) => {
      if (chunk.toString().includes('waiting for recordings')) ok()
    })
    proc.once('exit', (code) => fail(new Error(`worker exited with code ${code} before it was ready`)))
  })
  const stalled = new Promise<number>((ok) => {
    proc.stdout!.on('data', (chunk: Buffer) => {
      out = (out + chunk.toString()).slice(-4096)
      const m = /stalled at \w+ on recording (\d+)/.exec(out)
      if (m) ok(Number(m[1]))
    })
  })
  ready.catch(() => {})
  return {
    proc,
    ready,
    stalled,
    async stop(signal = 'SIGTERM') {
      if (proc.exitCode !== null || proc.signalCode !== null) return
      const exited = new Promise((r) => proc.once('exit', r))
      proc.kill(signal)
      await exited
    },
  }
}
