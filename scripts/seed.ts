/** npm run db:seed — runs every seed against the configured database (idempotent). */
import { loadConfig } from '../server/utils/config'
import { runSeeds } from './migrate'

runSeeds(loadConfig())
  .then(() => console.log('[seed] done'))
  .catch((err: unknown) => {
    console.error(`[seed] ${err instanceof Error ? err.message : String(err)}`)
    process.exit(1)
  })
