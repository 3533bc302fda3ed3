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
const officeRoles: Role[] = ['office']

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
      // Office screens: desktop, online, each page its own lazy chunk (never part of the field bundle).
      {
        path: 'office',
        name: 'office-projects',
        component: () => import('@/pages/office/OfficeProjectsPage.vue'),
        meta: { title: 'Projects', roles: officeRoles },
      },
      {
        path: 'office/projects/:projectId',
        name: 'office-project',
        component: () => import('@/pages/office/OfficeProjectPage.vue'),
        meta: { title: 'Project set-up', roles: officeRoles },
      },
      {
        path: 'office/projects/:projectId/cables/:cableId',
        name: 'office-cable',
        component: () => import('@/pages/office/OfficeCablePage.vue'),
        meta: { title: 'Cable', roles: officeRoles },
      },
      {
        path: 'office/projects/:projectId/closures/:closureId',
        name: 'office-closure',
        component: () => import('@/pages/office/OfficeClosurePage.vue'),
        meta: { title: 'Closure set-up', roles: officeRoles },
      },
      {
        path: 'office/closures/:closureId/plan',
        name: 'office-plan',
        component: () => import('@/pages/office/OfficePlanPage.vue'),
        meta: { title: 'Splice plan', roles: officeRoles },
      },
      {
        path: 'office/projects/:projectId/board',
        name: 'office-board',
        component: () => import('@/pages/office/OfficeBoardPage.vue'),
        meta: { title: 'Project board', roles: officeRoles },
      },
      {
        path: 'office/audit/:entity/:entityId',
        name: 'office-audit',
        component: () => import('@/pages/office/OfficeAuditPage.vue'),
        meta: { title: 'History', roles: officeRoles },
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
