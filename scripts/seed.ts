/** npm run db:seed — runs every seed against the configured database (idempotent). */
import { loadConfig } from '../server/utils/config.ts'
import { runSeeds } from './migrate.ts'

runSeeds(loadConfig())
  .then(() => console.log('[seed] done'))
  .catch((err: unknown) => {
    console.error(`[seed] ${err instanceof Error ? err.message : String(err)}`)
    process.exit(1)
  })
