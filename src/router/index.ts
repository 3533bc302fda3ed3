import { createRouter, createWebHistory } from 'vue-router'
import { routes } from './routes'

export const router = createRouter({
  history: createWebHistory(),
  routes,
  scrollBehavior: () => ({ left: 0, top: 0 }),
})

router.afterEach((to) => {
  document.title =
    to.meta.title && to.meta.title !== 'Lightseam' ? `${to.meta.title} · Lightseam` : 'Lightseam'
})
