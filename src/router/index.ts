import { createRouter, createWebHistory } from 'vue-router'
import { useSessionStore } from '@/stores/session'
import { routes } from './routes'

export const router = createRouter({
  history: createWebHistory(),
  routes,
  scrollBehavior: () => ({ left: 0, top: 0 }),
})

// A remembered user opens the app offline (their work is on the device); online, a session the server
// refuses goes to sign-in, the device database kept for when they are back.
router.beforeEach(async (to) => {
  if (to.meta.public) return true
  const session = useSessionStore()
  await session.restore()
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
