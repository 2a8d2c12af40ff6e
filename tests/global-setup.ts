/**
 * Global setup of the e2e project: a disposable stack (scripts/stack.ts) in `<data dir>/test` on
 * PGPORT + 1, never the demo database. Test files reach the server through `inject('baseUrl')` and
 * `@nuxt/test-utils` setup({ host }); they start the workers they need (tests/support/worker.ts).
 */
import { resolve } from 'node:path'
import type { TestProject } from 'vitest/node'
import { DEFAULTS, loadConfig } from '../server/utils/config'
import { startStack } from '../scripts/stack'

/** Short job expiry and frequent maintenance, so a killed worker's job is retried within seconds. */
export const TEST_QUEUE_ENV = { CONETRAIL_JOB_EXPIRE_S: '3', CONETRAIL_QUEUE_MAINTENANCE_S: '1' }

declare module 'vitest' {
  export interface ProvidedContext {
    baseUrl: string
    databaseUrl: string
    dataDir: string
    mailboxDir: string
  }
}

export default async function setup(project: TestProject) {
  const stack = await startStack({
    dataDir: resolve(loadConfig().dataDir, 'test'),
    pgPort: Number(process.env.CONETRAIL_TEST_PGPORT || (Number(process.env.PGPORT) || DEFAULTS.pgPort) + 1),
    database: 'conetrail_test',
    build: process.env.CONETRAIL_TEST_SKIP_BUILD !== '1',
    // A small upload limit, so the 413 test need not send a large body.
    // A trusted X-Forwarded-For, so the sign-in rate-limit test can come from addresses of its own.
    env: { ...TEST_QUEUE_ENV, CONETRAIL_MAX_UPLOAD_MB: '8', CONETRAIL_TRUST_PROXY: '1' },
  })
  project.provide('baseUrl', stack.baseUrl)
  project.provide('databaseUrl', stack.databaseUrl)
  project.provide('dataDir', stack.dataDir)
  project.provide('mailboxDir', stack.mailboxDir)
  return () => stack.stop()
}
