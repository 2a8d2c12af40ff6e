import { spawn, type ChildProcess } from 'node:child_process'
import { randomBytes } from 'node:crypto'
import { createServer } from 'node:net'
import { join, resolve } from 'node:path'
import { inject } from 'vitest'
import { TEST_QUEUE_ENV } from '../global-setup'

const root = resolve(import.meta.dirname, '../..')

export interface ExtraServer {
  baseUrl: string
  proc: ChildProcess
  stop(): Promise<void>
}

function freePort(): Promise<number> {
  return new Promise((ok, fail) => {
    const srv = createServer()
    srv.once('error', fail)
    srv.listen(0, '127.0.0.1', () => {
      const addr = srv.address()
      srv.close(() => (typeof addr === 'object' && addr ? ok(addr.port) : fail(new Error('no port'))))
    })
  })
}

/**
 * A second server from the global setup's build, on the same test database, with its own data
 * directory (e.g. a broken recording store): for faults that must not touch the shared server.
 */
export async function startExtraServer(opts: { dataDir: string; env?: Record<string, string> }): Promise<ExtraServer> {
  const port = await freePort()
  const proc = spawn(process.execPath, [join(inject('dataDir'), 'build', 'server', 'index.mjs')], {
    cwd: root,
    stdio: ['ignore', 'ignore', 'inherit'],
    env: {
      ...process.env,
      ...TEST_QUEUE_ENV,
      DATABASE_URL: inject('databaseUrl'),
      CONETRAIL_DATA_DIR: opts.dataDir,
      NODE_ENV: 'production',
      HOST: '127.0.0.1',
      PORT: String(port),
      NUXT_SESSION_PASSWORD: randomBytes(36).toString('base64url'),
      ...opts.env,
    },
  })
  const baseUrl = `http://127.0.0.1:${port}/`
  const until = Date.now() + 60_000
  for (;;) {
    if (proc.exitCode !== null) throw new Error(`extra server exited with code ${proc.exitCode}`)
    try {
      if ((await fetch(`${baseUrl}api/health`)).ok) break
    } catch {
      // not listening yet
    }
    if (Date.now() > until) throw new Error('extra server did not answer /api/health within 60 s')
    await new Promise((r) => setTimeout(r, 200))
  }
  return {
    baseUrl,
    proc,
    async stop() {
      if (proc.exitCode !== null || proc.signalCode !== null) return
      const exited = new Promise((r) => proc.once('exit', r))
      proc.kill('SIGTERM')
      await exited
    },
  }
}
