import { NAV_ITEMS } from '#shared/utils/navigation'
import { ROLE_LABELS, roleAllows, type Role } from '#shared/utils/roles'

export const ME_URL = '/api/auth/me'

/**
 * Why the visitor was sent to their own page instead of the one they asked for: the middleware
 * adds `?denied=<page>` (a query, so it survives the server's redirect on a full load, and the
 * next navigation drops it). Null when there is nothing to explain.
 */
export function accessNotice(denied: unknown, role: Role | undefined): string | null {
  if (typeof denied !== 'string' || !role) return null
  const item = NAV_ITEMS.find((i) => i.to === denied)
  if (!item || roleAllows(role, item.roles)) return null
  return `Your role (${ROLE_LABELS[role]}) cannot open ${item.label}. Ask an admin if you need it.`
}

function statusOf(err: unknown): number | undefined {
  if (err && typeof err === 'object') {
    const e = err as { statusCode?: number; status?: number }
    return e.statusCode ?? e.status
  }
  return undefined
}

/**
 * Re-reads the signed-in person from the server (which checks the account on every call) and
 * brings the client's session up to date: a new role or name shows at once. Returns false when the
 * server no longer knows the session (deactivated, signed out elsewhere): the client session is
 * cleared then. A network failure keeps what the client has; the server guards every request anyway.
 */
export async function syncSession(): Promise<boolean> {
  // Taken before the first await: on the server the Nuxt instance is not reachable after it.
  const nuxtApp = useNuxtApp()
  const { session, clear } = useUserSession()
  try {
    const me = await useRequestFetch()(ME_URL)
    if (session.value) session.value = { ...session.value, user: me.user }
    return true
  } catch (err) {
    if (statusOf(err) !== 401) return true
    await nuxtApp.runWithContext(() => clear())
    return false
  }
}

/** Where a visitor whose session ended is sent: sign-in, with the reason and the page to go back to. */
export function sessionEndedRoute(from?: string) {
  return { path: '/login', query: { ended: '1', ...(from && from !== '/' && !from.startsWith('/login') ? { redirect: from } : {}) } }
}
