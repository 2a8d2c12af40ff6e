import { setup } from '@nuxt/test-utils/e2e'
import { inject } from 'vitest'

/** Points @nuxt/test-utils at the one server the global setup started (no build per file). */
export async function useTestServer() {
  const host = inject('baseUrl')
  await setup({ host })
  return host
}

/** Signs in through the real route and returns the session cookie to send with later requests. */
export async function signIn(host: string, email: string, password: string): Promise<{ status: number; cookie: string }> {
  const res = await fetch(new URL('/api/auth/login', host), {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify({ email, password }),
  })
  const cookie = res.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ')
  return { status: res.status, cookie }
}
