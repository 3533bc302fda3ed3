import type { RouteRecordRaw } from 'vue-router'
import type { Role } from '#shared/schemas/enums'

declare module 'vue-router' {
  interface RouteMeta {
    title?: string
    /** Roles that may open the route; absent means anyone signed in (or not, for public pages). */
    roles?: Role[]
    /** Opens without a signed-in user. */
    public?: boolean
  }
}

const fieldRoles: Role[] = ['splicer', 'foreman', 'office']

export const routes: RouteRecordRaw[] = [
  {
    path: '/',
    component: () => import('@/layouts/MainLayout.vue'),
    children: [
      {
        path: '',
        name: 'closures',
        component: () => import('@/pages/ClosuresPage.vue'),
        meta: { title: 'Closures', roles: fieldRoles },
      },
      {
        path: 'sign-in',
        name: 'sign-in',
        component: () => import('@/pages/SignInPage.vue'),
        meta: { title: 'Sign in', public: true },
      },
      {
        path: 'closures/:closureId',
        name: 'closure',
        component: () => import('@/pages/ClosurePage.vue'),
        meta: { title: 'Closure', roles: fieldRoles },
      },
      {
        path: 'closures/:closureId/trays/:trayId',
        name: 'tray',
        component: () => import('@/pages/TrayPage.vue'),
        meta: { title: 'Tray', roles: fieldRoles },
      },
      {
        path: 'welcome',
        name: 'welcome',
        component: () => import('@/pages/SetPasswordPage.vue'),
        meta: { title: 'Welcome', public: true },
      },
      {
        path: 'reset-password',
        name: 'reset-password',
        component: () => import('@/pages/SetPasswordPage.vue'),
        meta: { title: 'Reset password', public: true },
      },
      {
        path: 'office/people',
        name: 'office-people',
        component: () => import('@/pages/office/PeoplePage.vue'),
        meta: { title: 'People', roles: ['office'] },
      },
      {
        path: 'office/mailbox',
        name: 'office-mailbox',
        component: () => import('@/pages/office/MailboxPage.vue'),
        meta: { title: 'Mailbox', roles: ['office'] },
      },
    ],
  },
  {
    path: '/:catchAll(.*)*',
    name: 'not-found',
    component: () => import('@/pages/NotFoundPage.vue'),
    meta: { title: 'Not found', public: true },
  },
]
