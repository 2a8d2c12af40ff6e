import { homeFor, navItemFor } from '#shared/utils/navigation'
import { roleAllows } from '#shared/utils/roles'

/** Comfort only: sends signed-out visitors to sign-in and keeps roles on their own pages. The server guards are the protection. */
export default defineNuxtRouteMiddleware((to) => {
  const { loggedIn, user } = useUserSession()
  // An invitation link is opened by someone who has no account yet.
  if (to.path.startsWith('/invite/')) return
  if (to.path === '/login') {
    return loggedIn.value && user.value ? navigateTo(homeFor(user.value.role)) : undefined
  }
  if (!loggedIn.value || !user.value) {
    return navigateTo({ path: '/login', query: to.fullPath !== '/' ? { redirect: to.fullPath } : {} })
  }
  if (to.path === '/') return navigateTo(homeFor(user.value.role))
  const item = navItemFor(to.path)
  if (item && !roleAllows(user.value.role, item.roles)) return navigateTo(homeFor(user.value.role))
})
