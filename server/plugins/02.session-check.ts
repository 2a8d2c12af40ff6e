/**
 * nuxt-auth-utils answers GET /api/_auth/session from the cookie alone. Before it does, the same
 * check as every route runs (signedInUser: the session still open on the server, the account
 * active). For a session that was signed out or cut off, the answer names no person, only
 * `ended: true`, so the page can say "Your session has ended" (middleware/auth.global.ts) without
 * a copied cookie telling whose it was.
 */
export default defineNitroPlugin(() => {
  sessionHooks.hook('fetch', async (session, event) => {
    if (!session.user || (await signedInUser(event))) return
    for (const key of Object.keys(session)) if (key !== 'id') delete session[key]
    session.ended = true
  })
})
