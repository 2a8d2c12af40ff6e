import { homeFor, navItemFor } from '#shared/utils/navigation'
import { roleAllows } from '#shared/utils/roles'

/**
 * Comfort only: sends signed-out visitors to sign-in and keeps roles on their own pages, saying
 * why. The server guards are the protection. Each navigation re-reads the person from the server,
 * so a role change shows on the next page and a deactivated person is signed out here too.
 */
export default defineNuxtRouteMiddleware(async (to) => {
  // An invitation link is opened by someone who has no account yet.
  if (to.path.startsWith('/invite/')) return
  const { loggedIn, user, session } = useUserSession()
  let ended = false
  if (loggedIn.value) ended = !(await syncSession())
  // The server found this browser's session ended (signed out elsewhere, deactivated): say so.
  else if (session.value?.ended === true) ended = true
  if (to.path === '/login') {
    return loggedIn.value && user.value ? navigateTo(homeFor(user.value.role)) : undefined
  }
  if (!loggedIn.value || !user.value) {
    if (ended) return navigateTo(sessionEndedRoute(to.fullPath))
    return navigateTo({ path: '/login', query: to.fullPath !== '/' ? { redirect: to.fullPath } : {} })
  }
  const home = homeFor(user.value.role)
  if (to.path === '/') return navigateTo(home)
  const item = navItemFor(to.path)
  // Sent home with the page's name, so the layout can say why (accessNotice).
  if (item && !roleAllows(user.value.role, item.roles)) return navigateTo({ path: home, query: { denied: item.to } })
})
