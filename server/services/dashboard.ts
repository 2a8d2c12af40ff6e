import type { Knex } from 'knex'
import type { DashboardView } from '../../shared/types/reports.ts'
import { listDayYield, listLots } from '../repos/lots.ts'
import { listProductReturnRates } from '../repos/returns.ts'
import { listAlerts } from '../repos/alerts.ts'

const DAY_MS = 86_400_000

/**
 * The quality dashboard for one day (UTC, YYYY-MM-DD): yield per line and product from that day's
 * production tests, open lots, open alerts, and each product's return rate (all time).
 */
export async function getDashboard(db: Knex, day: string): Promise<DashboardView> {
  const from = new Date(`${day}T00:00:00.000Z`)
  const to = new Date(from.getTime() + DAY_MS)
  const [lines, openLots, alerts, returnsByProduct] = await Promise.all([
    listDayYield(db, from, to),
    listLots(db, { open: true, limit: 50 }),
    listAlerts(db, { open: true, limit: 50 }),
    listProductReturnRates(db),
  ])
  return {
    date: day,
    byLineProduct: lines.map((l) => ({ ...l, yield: l.passed + l.failed === 0 ? null : l.passed / (l.passed + l.failed) })),
    openLots,
    alerts,
    returnsByProduct,
  }
}
