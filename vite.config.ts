/// <reference types="vitest/config" />
import { fileURLToPath, URL } from 'node:url'
import { defineConfig } from 'vite'
import vue from '@vitejs/plugin-vue'
import { quasar, transformAssetUrls } from '@quasar/vite-plugin'
import { VitePWA } from 'vite-plugin-pwa'

const apiPort = Number(process.env.LIGHTSEAM_API_PORT ?? 3000)
const srcDir = fileURLToPath(new URL('./src', import.meta.url))

export default defineConfig({
  resolve: {
    // `#shared/*` and `#db/*` come from package.json "imports", which Vite, Node and TypeScript all read.
    alias: { '@': srcDir },
  },
  define: {
    // Every component is <script setup>; without the Options API Vue's runtime is smaller.
    __VUE_OPTIONS_API__: 'false',
  },
  plugins: [
    vue({ template: { transformAssetUrls } }),
    quasar({
      sassVariables: fileURLToPath(new URL('./src/css/quasar.variables.scss', import.meta.url)),
    }),
    VitePWA({
      registerType: 'prompt',
      injectRegister: false,
      includeAssets: ['favicon.svg', 'icons/apple-touch-icon.png'],
      manifest: {
        name: 'Lightseam',
        short_name: 'Lightseam',
        description: 'Log, check and sign off fusion splices — offline first.',
        lang: 'en',
        start_url: '/',
        scope: '/',
        display: 'standalone',
        orientation: 'portrait',
        background_color: '#10141a',
        theme_color: '#0f6e6a',
        icons: [
          { src: '/icons/icon-192.png', sizes: '192x192', type: 'image/png' },
          { src: '/icons/icon-512.png', sizes: '512x512', type: 'image/png' },
          { src: '/icons/icon-maskable-512.png', sizes: '512x512', type: 'image/png', purpose: 'maskable' },
        ],
      },
      workbox: {
        globPatterns: ['**/*.{js,css,html,svg,png,woff2,webmanifest}'],
        navigateFallback: '/index.html',
        navigateFallbackDenylist: [/^\/api\//],
        cleanupOutdatedCaches: true,
        // Records live in IndexedDB; the worker never caches API answers.
        runtimeCaching: [{ urlPattern: /^\/api\//, handler: 'NetworkOnly' }],
      },
    }),
  ],
  server: {
    port: 5173,
    proxy: { '/api': { target: `http://127.0.0.1:${apiPort}`, changeOrigin: false } },
  },
  build: {
    target: 'es2022',
    sourcemap: false,
    chunkSizeWarningLimit: 600,
    // Read by tests/bench/bundle.bench.ts to add up what the field screens load.
    manifest: true,
    rolldownOptions: {
      output: {
        // The libraries every screen starts with travel as one chunk: one request, one gzip window.
        codeSplitting: {
          groups: [{ name: 'core', test: /node_modules[\\/](@vue|vue|vue-router|pinia|dexie|zod)[\\/]/ }],
        },
      },
    },
  },
  test: {
    projects: [
      {
        extends: true,
        test: {
          name: 'unit',
          environment: 'node',
          include: ['tests/unit/**/*.test.ts', 'tests/api/**/*.test.ts'],
          setupFiles: ['tests/setup/indexeddb.ts'],
          testTimeout: 20_000,
        },
      },
      {
        extends: true,
        test: {
          name: 'component',
          environment: 'happy-dom',
          include: ['tests/component/**/*.test.ts'],
        },
      },
      {
        extends: true,
        test: {
          name: 'e2e',
          environment: 'node',
          include: ['tests/e2e/**/*.test.ts'],
          testTimeout: 180_000,
          hookTimeout: 240_000,
          fileParallelism: false,
          // expect.poll waits for the page (a photo compressed and stored, a sync round); 1 s, the default,
          // is too short on a loaded two-core CI machine. These are waits, not timing checks.
          expect: { poll: { timeout: 15_000 } },
        },
      },
    ],
  },
})
