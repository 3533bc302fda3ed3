// The Quasar options that src/main.ts passes to app.use(Quasar, …); nothing else is configured here.
// Build, PWA and dev-server settings live in vite.config.ts (Quasar runs through @quasar/vite-plugin).
import type { QuasarPluginOptions } from 'quasar'
import { Dark, LocalStorage } from 'quasar'
import iconSet from 'quasar/icon-set/svg-material-icons'

export const quasarOptions: Partial<QuasarPluginOptions> = {
  plugins: { Dark, LocalStorage },
  iconSet,
  config: {
    dark: 'auto',
    brand: {
      primary: '#0f6e6a',
      secondary: '#3d5a80',
      accent: '#e0a100',
      positive: '#2e7d32',
      negative: '#c62828',
      info: '#1565c0',
      warning: '#ef6c00',
    },
  },
}
