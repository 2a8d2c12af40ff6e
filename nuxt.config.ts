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
  modules: ['@nuxtjs/tailwindcss', '@pinia/nuxt', 'nuxt-auth-utils'],
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
