import { spawn, type ChildProcess } from 'node:child_process'
import { resolve } from 'node:path'
import { inject } from 'vitest'
import { TEST_QUEUE_ENV } from '../global-setup'

const root = resolve(import.meta.dirname, '../..')

export interface RunningWorker {
  proc: ChildProcess
  /** Resolves once the worker listens for jobs. */
  ready: Promise<void>
  stop(signal?: NodeJS.Signals): Promise<void>
}

/** Starts workers/analyze.ts against the test database, as npm start does. `hang` makes it stall on every job (kill tests). */
export function startWorker(opts: { hang?: boolean } = {}): RunningWorker {
  const proc = spawn(process.execPath, ['--import', 'tsx', resolve(root, 'workers/analyze.ts')], {
    cwd: root,
    stdio: ['ignore', 'pipe', 'inherit'],
    env: {
      ...process.env,
      ...TEST_QUEUE_ENV,
      DATABASE_URL: inject('databaseUrl'),
      CONETRAIL_DATA_DIR: inject('dataDir'),
      CONETRAIL_WORKER_HANG: opts.hang ? '1' : '0',
    },
  })
  const ready = new Promise<void>((ok, fail) => {
    proc.stdout!.on('data', (chunk: Buffer) => {
      if (chunk.toString().includes('waiting for recordings')) ok()
    })
    proc.once('exit', (code) => fail(new Error(`worker exited with code ${code} before it was ready`)))
  })
  return {
    proc,
    ready,
    async stop(signal = 'SIGTERM') {
      if (proc.exitCode !== null || proc.signalCode !== null) return
      const exited = new Promise((r) => proc.once('exit', r))
      proc.kill(signal)
      await exited
    },
  }
}
