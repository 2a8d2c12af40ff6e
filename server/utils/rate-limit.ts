/**
 * Sign-in rate limits (rate-limiter-flexible, PostgreSQL store in the `sign_in_limits` table, so
 * every web server behind a load balancer counts together and a restart forgets nothing).
 * Each try takes its place in both counts before its password is checked, so tries sent at once
 * cannot all be checked before the count catches up: at most the limit is ever checked. A
 * successful sign-in gives its place back, so in effect only failed sign-ins count:
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

/**
 * Takes a place for one sign-in try in the account's count and the address's, before the password
 * is checked (PostgreSQL adds the point and reads the total in one statement). Answers the seconds
 * to wait when either count is already full (nothing is then taken from the other), else 0. The try
 * that goes past a limit starts that key's block, for a full window from now.
 */
export async function reserveSignInTry(email: string, address: string | null): Promise<number> {
  const { account, address: byAddress } = useLimiters()
  const accountWait = await take(account, email)
  if (accountWait > 0 || !address) return accountWait
  const addressWait = await take(byAddress, address)
  if (addressWait > 0) await account.reward(email, 1)
  return addressWait
}

/** Consumes one point: 0 when taken, the seconds until the key may try again when refused. */
async function take(limiter: RateLimiterPostgres, key: string): Promise<number> {
  try {
    await limiter.consume(key)
    return 0
  } catch (err) {
    if (!(err instanceof RateLimiterRes)) throw err
    return Math.max(1, Math.ceil(err.msBeforeNext / 1000))
  }
}

/** A successful sign-in clears the account's count and gives its address back the place it took (an address keeps its failures). */
export async function recordSignInSuccess(email: string, address: string | null): Promise<void> {
  const { account, address: byAddress } = useLimiters()
  await Promise.all([account.delete(email), address ? byAddress.reward(address, 1) : null])
}
