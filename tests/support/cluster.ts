import { inject } from 'vitest'
import { pgCtlAsync, type ClusterOptions } from '../../scripts/db'

/** The global setup's PostgreSQL cluster (tests/global-setup.ts): same folder, port and options. */
export function testCluster(): ClusterOptions {
  const url = new URL(inject('databaseUrl'))
  return { dataDir: inject('dataDir'), port: Number(url.port), user: decodeURIComponent(url.username), fast: true }
}

/** Stops the test cluster (fast shutdown: open sessions are ended, as in a real restart). */
export function stopTestCluster(): Promise<void> {
  return pgCtlAsync(testCluster(), 'stop')
}

/** Starts the test cluster again and resolves once it accepts connections (pg_ctl -w). */
export function startTestCluster(): Promise<void> {
  return pgCtlAsync(testCluster(), 'start')
}
