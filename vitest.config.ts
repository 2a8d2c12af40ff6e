import { fileURLToPath } from 'node:url'
import { defineConfig } from 'vitest/config'

// Three projects (see DEVELOPERS.md):
//  - unit:    pure code (engine, parsers, helpers), node environment, fast.
//  - e2e:     the real built Nuxt server and the real PostgreSQL through @nuxt/test-utils.
//  - browser: Debian's chromium driven by playwright-core against the real server.
// PostgreSQL is started by tests/global-setup.ts for the projects that need it.
export default defineConfig({
  test: {
    projects: [
      {
        // The app's `#shared` alias (Nuxt's), so the browser-side helpers in utils/ load here too.
        resolve: { alias: { '#shared': fileURLToPath(new URL('./shared', import.meta.url)) } },
        test: {
          name: 'unit',
          environment: 'node',
          include: ['tests/unit/**/*.test.ts'],
        },
      },
      {
        test: {
          name: 'e2e',
          environment: 'node',
          include: ['tests/e2e/**/*.test.ts', 'tests/browser/**/*.test.ts'],
          globalSetup: ['tests/global-setup.ts'],
          hookTimeout: 600_000,
          testTimeout: 60_000,
          // One Nuxt build and one server for all end-to-end files.
          fileParallelism: false,
        },
      },
    ],
  },
})
