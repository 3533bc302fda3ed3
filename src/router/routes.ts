import type { RouteRecordRaw } from 'vue-router'
import type { Role } from '#shared/schemas/enums'

declare module 'vue-router' {
  interface RouteMeta {
    title?: string
    /** Roles that may open the route; absent means anyone signed in (or not, for public pages). */
    roles?: Role[]
  }
}

export const routes: RouteRecordRaw[] = [
  {
    path: '/',
    component: () => import('@/layouts/MainLayout.vue'),
    children: [
      {
        path: '',
        name: 'home',
        component: () => import('@/pages/HomePage.vue'),
        meta: { title: 'Lightseam' },
      },
    ],
  },
  {
    path: '/:catchAll(.*)*',
    name: 'not-found',
    component: () => import('@/pages/NotFoundPage.vue'),
    meta: { title: 'Not found' },
  },
]
