/**
 * Sign-in rate limits (rate-limiter-flexible, PostgreSQL store in the `sign_in_limits` table, so
 * every web server behind a load balancer counts together and a restart forgets nothing).
 * Only failed sign-ins count:
 *  - per account (the e-mail tried, known or not): 10 failures in 15 min block it for 15 min;
 *    a successful sign-in clears the account's count;
 *  - per address: 100 failures in an hour block the address for an hour (a shop floor behind one
 *    address shares it, hence the higher figure); success does not clear it.
 * Figures are common practice for password sign-in, adjustable with the variables below.
 */
import { RateLimiterPostgres, RateLimiterRes } from 'rate-limiter-flexible'
import { useDb } from './db'

function envInt(name: string, fallback: number): number {
  const n = Number(process.env[name])
  return Number.isInteger(n) && n > 0 ? n : fallback
}

export const SIGN_IN_LIMITS = {
  account: { failures: 10, windowS: 15 * 60 },
  address: { failures: 100, windowS: 60 * 60 },
} as const

function limits() {
  return {
    account: { failures: envInt('CONETRAIL_SIGNIN_ACCOUNT_FAILURES', SIGN_IN_LIMITS.account.failures), windowS: SIGN_IN_LIMITS.account.windowS },
    address: { failures: envInt('CONETRAIL_SIGNIN_ADDRESS_FAILURES', SIGN_IN_LIMITS.address.failures), windowS: SIGN_IN_LIMITS.address.windowS },
  }
}

let limiters: { account: RateLimiterPostgres; address: RateLimiterPostgres } | undefined

function useLimiters() {
  if (!limiters) {
    const l = limits()
    const make = (keyPrefix: string, o: { failures: number; windowS: number }) =>
      new RateLimiterPostgres({
        storeClient: useDb(),
        storeType: 'knex',
        tableName: 'sign_in_limits',
        tableCreated: true, // made by the migration
        keyPrefix,
        points: o.failures,
        duration: o.windowS,
        blockDuration: o.windowS,
      })
    limiters = { account: make('account', l.account), address: make('address', l.address) }
  }
  return limiters
}

/** Seconds until a blocked caller may try again, or 0 when it may try now. */
export async function signInRetryAfter(email: string, address: string | null): Promise<number> {
  const { account, address: byAddress } = useLimiters()
  const l = limits()
  const states = await Promise.all([account.get(email), address ? byAddress.get(address) : null])
  const waits = states.map((s, i) => {
    const max = i === 0 ? l.account.failures : l.address.failures
    return s && s.consumedPoints >= max ? s.msBeforeNext : 0
  })
  return Math.ceil(Math.max(...waits) / 1000)
}

/** Counts one failed sign-in against the account and the address; when a count reaches its limit, the block starts now for a full window. */
export async function recordSignInFailure(email: string, address: string | null): Promise<void> {
  const { account, address: byAddress } = useLimiters()
  await Promise.all([penalise(account, email), address ? penalise(byAddress, address) : null])
}

async function penalise(limiter: RateLimiterPostgres, key: string) {
  try {
    const res = await limiter.consume(key)
    if (res.remainingPoints === 0) await limiter.block(key, limiter.blockDuration)
  } catch (err) {
    // Over the limit already (concurrent failures): it stays blocked.
    if (!(err instanceof RateLimiterRes)) throw err
  }
}

/** A successful sign-in clears the account's failures (not the address's). */
export async function recordSignInSuccess(email: string): Promise<void> {
  await useLimiters().account.delete(email)
}
