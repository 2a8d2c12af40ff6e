import { Hash } from '@adonisjs/hash'
import { Scrypt } from '@adonisjs/hash/drivers/scrypt'

// The same hasher, with the same default options, that nuxt-auth-utils' hashPassword uses on the
// server (it reads runtimeConfig.hash.scrypt, which Conetrail leaves unset). Scripts and seeds run
// outside Nuxt, so they build it here; the e2e sign-in tests prove both sides agree.
const hash = new Hash(new Scrypt({}))

export function makePasswordHash(password: string): Promise<string> {
  return hash.make(password)
}
