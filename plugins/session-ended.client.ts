import type { ApiErrorBody } from '#shared/types/api'
import { ME_URL, sessionEndedRoute } from '~/composables/useSessionSync'

/**
 * Any request answered 401 `unauthenticated` while the page thinks someone is signed in means the
 * server ended the session (deactivation, sign-out elsewhere): clear the client session and go to
 * sign-in with a word why, instead of leaving empty pages. Navigation's own check (/api/auth/me in
 * the route middleware) handles itself.
 */
export default defineNuxtPlugin((nuxtApp) => {
  let ending = false
  const base = globalThis.$fetch
  globalThis.$fetch = base.create({
    async onResponseError({ request, response }) {
      if (response.status !== 401 || ending) return
      const url = typeof request === 'string' ? request : request instanceof Request ? request.url : ''
      if (url.includes(ME_URL)) return
      if ((response._data as Partial<ApiErrorBody> | undefined)?.data?.code !== 'unauthenticated') return
      const { loggedIn, clear } = useUserSession()
      if (!loggedIn.value) return
      ending = true
      try {
        await nuxtApp.runWithContext(async () => {
          await clear()
          await navigateTo(sessionEndedRoute(useRoute().fullPath))
        })
      } finally {
        ending = false
      }
    },
  }) as typeof globalThis.$fetch
})
