import { fileURLToPath, URL } from 'node:url'
import vue from '@vitejs/plugin-vue'
import vuetify from 'vite-plugin-vuetify'
import { compression } from 'vite-plugin-compression2'
import { defineConfig } from 'vitest/config'

const alias = {
  '@': fileURLToPath(new URL('./src', import.meta.url)),
  '@shared': fileURLToPath(new URL('./shared', import.meta.url)),
  '@server': fileURLToPath(new URL('./server', import.meta.url)),
}

// https://vite.dev/config/ and https://vitest.dev/config/
export default defineConfig({
  // the built assets also as .br and .gz, served as they are by server/app.ts (no compression per request)
  // the Options API left out: every component is written with <script setup> or setup(), and with it on, Vuetify adds a
  // global mixin that gives each of the register's ~1,900 component instances a `$vuetify` computed (first load)
  plugins: [
    vue({ features: { optionsAPI: false } }),
    vuetify({ autoImport: true }),
    compression({ algorithms: ['brotliCompress', 'gzip'] }),
  ],
  resolve: { alias },
  server: {
    port: 5173,
    proxy: { '/api': { target: `http://127.0.0.1:${process.env.PORT ?? 8080}`, changeOrigin: false } },
  },
  build: {
    chunkSizeWarningLimit: 1500,
    rolldownOptions: {
      output: {
        // fewer, larger files for the first load (docs/architecture.md#first-load): everything the entry imports
        // statically (Vue, Vuetify's core, the router, the layouts) in one file, and the Vuetify components that eight
        // or more views use (fields, selects, data tables, cards, dialogs) in another, instead of about forty small ones
        codeSplitting: {
          groups: [
            { name: 'app', tags: ['$initial'] },
            { name: 'vuetify', test: /node_modules[\\/]vuetify[\\/]/, minShareCount: 8 },
          ],
        },
      },
    },
  },
  test: {
    testTimeout: 30_000,
    hookTimeout: 120_000,
    projects: [
      {
        resolve: { alias },
        test: {
          name: 'unit',
          environment: 'node',
          testTimeout: 30_000,
          include: ['tests/unit/shared/**/*.test.ts', 'tests/unit/server/**/*.test.ts'],
        },
      },
      {
        plugins: [vue(), vuetify({ autoImport: true })],
        resolve: { alias },
        test: {
          name: 'ui',
          environment: 'happy-dom',
          // a project does not inherit the root's timeouts; mounting a view takes seconds on a busy machine
          testTimeout: 30_000,
          include: ['tests/unit/src/**/*.test.ts'],
          server: { deps: { inline: ['vuetify'] } },
        },
      },
      {
        resolve: { alias },
        test: {
          name: 'api',
          environment: 'node',
          testTimeout: 60_000,
          hookTimeout: 120_000,
          include: ['tests/api/**/*.test.ts'],
          globalSetup: ['tests/global-setup.ts'],
        },
      },
      {
        resolve: { alias },
        test: {
          name: 'browser',
          environment: 'node',
          // one test is a whole journey (sign in, fill a form, sign, check the record): up to 90 s on a loaded machine
          testTimeout: 180_000,
          hookTimeout: 120_000,
          // a busy 2-core machine can take seconds to render after a request: poll conditions for up to 15 s, not 1 s
          expect: { poll: { timeout: 15_000, interval: 100 } },
          include: ['tests/browser/**/*.spec.ts'],
          globalSetup: ['tests/global-setup.ts'],
          fileParallelism: false,
        },
      },
    ],
  },
})
