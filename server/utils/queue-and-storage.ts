import type PgBoss from 'pg-boss'
import { createBoss, ensureQueue } from '../queue/index'
import { directoryStorage, type RecordingStorage } from '../storage/recordings'
import { loadConfig } from './config'

let boss: Promise<PgBoss> | undefined
let storage: RecordingStorage | undefined

/** The server's pg-boss client: it only sends (the workers run maintenance and work). */
export function useBoss(): Promise<PgBoss> {
  boss ??= (async () => {
    const b = createBoss(loadConfig().databaseUrl, { supervise: false })
    b.on('error', (err) => console.error(`[queue] ${err.message}`))
    await b.start()
    await ensureQueue(b)
    return b
  })().catch((err: unknown) => {
    boss = undefined
    throw err
  })
  return boss
}

export function useRecordingStorage(): RecordingStorage {
  storage ??= directoryStorage(loadConfig().dataDir)
  return storage
}
