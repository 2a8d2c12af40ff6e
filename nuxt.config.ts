// https://nuxt.com/docs/api/nuxt-config
import pkg from './package.json' with { type: 'json' }

export default defineNuxtConfig({
  compatibilityDate: '2026-11-01',
  // The repository root is the source directory (design card); set explicitly so an
  // app/ folder created later cannot silently take over.
  srcDir: '.',
  // The test setup builds in its own folders, so test runs never disturb a dev build or each other.
  ...(process.env.CONETRAIL_BUILD_DIR ? { buildDir: process.env.CONETRAIL_BUILD_DIR } : {}),
  devtools: { enabled: false },
  telemetry: false,
  modules: ['@nuxtjs/tailwindcss', '@pinia/nuxt', 'nuxt-auth-utils', 'nuxt-security'],
  // Security headers and the content security policy (README, "Security"). Scripts run only with
  // the per-response nonce Nuxt's SSR stamps on its own tags ('strict-dynamic' lets them load the
  // page chunks); styles may be inline (Vue style bindings, uPlot); fonts are our own files.
  security: {
    headers: {
      contentSecurityPolicy: {
        'default-src': ["'self'"],
        'base-uri': ["'none'"],
        'connect-src': ["'self'"],
        'font-src': ["'self'", 'data:'],
        'form-action': ["'self'"],
        'frame-ancestors': ["'none'"],
        'img-src': ["'self'", 'data:', 'blob:'],
        'object-src': ["'none'"],
        'script-src': ["'self'", "'strict-dynamic'", "'nonce-{{nonce}}'"],
        'script-src-attr': ["'none'"],
        'style-src': ["'self'", "'unsafe-inline'"],
        // Conetrail is often served over plain http on a factory network: never rewrite its URLs to https.
        'upgrade-insecure-requests': false,
      },
      xFrameOptions: 'DENY',
    },
    // Sign-in has its own per-account and per-address limiter (server/utils/rate-limit.ts); a
    // global per-address limit would throttle thirty stations behind one address.
    rateLimiter: false,
    // Inputs are validated by zod and rendered as text (no v-html); this filter would also read
    // whole uploads into memory.
    xssValidator: false,
    // Same-origin app: no cross-origin caller is granted anything.
    corsHandler: false,
    requestSizeLimiter: { maxRequestSizeInBytes: 2_000_000, maxUploadFileRequestInBytes: 8_000_000 },
  },
  routeRules: {
    // Upload routes (every route calling readMultipartUpload; a test checks the list): formidable
    // streams the body to disk and stops at the route's own limit (CONETRAIL_MAX_UPLOAD_MB, 64 MB by
    // default; CONETRAIL_MAX_ATTACHMENT_MB) with 413 `too_large`, counting real bytes rather than
    // trusting Content-Length, so nuxt-security's fixed limit stays out of their way.
    '/api/recordings': { security: { requestSizeLimiter: false } },
    '/api/returns/*/retest': { security: { requestSizeLimiter: false } },
    '/api/returns/*/attachments': { security: { requestSizeLimiter: false } },
  },
  css: [
    '@fontsource/source-sans-3/400.css',
    '@fontsource/source-sans-3/600.css',
    '@fontsource/source-sans-3/700.css',
    '@fontsource/jetbrains-mono/400.css',
    '@fontsource/jetbrains-mono/700.css',
    '~/assets/css/main.css',
  ],
  app: {
    head: {
      title: 'Conetrail',
      htmlAttrs: { lang: 'en' },
      meta: [{ name: 'viewport', content: 'width=device-width, initial-scale=1' }],
      link: [{ rel: 'icon', type: 'image/svg+xml', href: '/favicon.svg' }],
    },
  },
  runtimeConfig: {
    // nuxt-auth-utils' sealed cookie: one shift (NUXT_SESSION_MAX_AGE, seconds), HttpOnly, SameSite=Lax;
    // the Secure flag is set per request (server/utils/auth.ts, CONETRAIL_SECURE_COOKIE).
    session: { maxAge: 12 * 60 * 60, cookie: { sameSite: 'lax', httpOnly: true } },
    appVersion: pkg.version,
    dataDir: '.data',
    public: { appVersion: pkg.version },
  },
  typescript: {
    strict: true,
    tsConfig: {
      // Route types pull server files (and the engine, whose imports carry .ts) into the app check.
      compilerOptions: { allowImportingTsExtensions: true },
      exclude: [
        '../workers',
        '../migrations',
        '../seeds',
        '../tests',
        '../scripts',
        '../fixtures',
        '../knexfile.ts',
        '../vitest.config.ts',
      ],
    },
  },
  nitro: {
    // The engine under server/analysis is also run by tsx (scripts, workers), where explicit .ts
    // import paths are the norm; type-checking accepts both styles.
    typescript: { tsConfig: { compilerOptions: { allowImportingTsExtensions: true } } },
    // The test setup builds into its own folder so it never replaces a running `npm start` build.
    ...(process.env.CONETRAIL_OUTPUT_DIR ? { output: { dir: process.env.CONETRAIL_OUTPUT_DIR } } : {}),
    // knex loads dialects dynamically; keep it and pg external to the bundle.
    externals: { external: ['knex', 'pg'] },
  },
})
