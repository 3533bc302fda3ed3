// First: zod must not probe for eval under the CSP (see boot/zod.ts).
import '@/boot/zod'
import { createApp } from 'vue'
import { createPinia } from 'pinia'
import { Quasar } from 'quasar'
import 'quasar/src/css/index.sass'
import '@/css/fonts.css'
import '@/css/app.scss'
import { quasarOptions } from '../quasar.config'
import App from '@/App.vue'
import { router } from '@/router'
import { bootPwa } from '@/boot/pwa'
import { bootSync } from '@/boot/sync'
import { useUiStore } from '@/stores/ui'

const app = createApp(App)
app.use(Quasar, quasarOptions)
app.use(createPinia())
app.use(router)

// Boot files run in this order, one concern each.
useUiStore()
bootPwa()
bootSync()

app.mount('#app')
