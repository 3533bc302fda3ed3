import { createRouter, createWebHistory } from 'vue-router'
import { useSessionStore } from '@/stores/session'
import { routes } from './routes'

export const router = createRouter({
  history: createWebHistory(),
  routes,
  scrollBehavior: () => ({ left: 0, top: 0 }),
})

// How long a screen waits for the start-up refresh. On a network that connects but never answers (signal
// bars, no data, as in a vault) the refresh can hang until it times out, and the device's work must not
// wait for it: past this the screen opens, and a refusal learned later shows as "sign in again".
const restoreWaitMs = 3000

// A remembered user opens the app offline (their work is on the device); online, a session the server
// refuses goes to sign-in, the device database kept for when they are back.
router.beforeEach(async (to) => {
  if (to.meta.public) return true
  const session = useSessionStore()
  await Promise.race([session.restore(), new Promise((resolve) => setTimeout(resolve, restoreWaitMs))])
  const signedOut = !session.user || (session.needsSignIn && navigator.onLine)
  if (signedOut) return { name: 'sign-in', query: to.fullPath === '/' ? {} : { next: to.fullPath } }
  if (to.meta.roles && session.user && !to.meta.roles.includes(session.user.role))
    return { name: 'not-found' }
  return true
})

router.afterEach((to) => {
  document.title =
    to.meta.title && to.meta.title !== 'Lightseam' ? `${to.meta.title} · Lightseam` : 'Lightseam'
})
