import { defineStore } from 'pinia'
import { NAV_ITEMS } from '#shared/utils/navigation'
import { roleAllows } from '#shared/utils/roles'

/** Session-wide client state: who is signed in (from nuxt-auth-utils) and what they picked. */
export const useSessionStore = defineStore('session', () => {
  const { user, loggedIn, fetch: refreshSession, clear } = useUserSession()
  const stationId = ref<number | null>(null)
  const productCode = ref<string | null>(null)

  const navItems = computed(() => NAV_ITEMS.filter((i) => roleAllows(user.value?.role, i.roles)))

  async function signOut() {
    await $fetch('/api/auth/logout', { method: 'POST' })
    await clear()
    stationId.value = null
    productCode.value = null
  }

  return { user, loggedIn, refreshSession, navItems, stationId, productCode, signOut }
})
