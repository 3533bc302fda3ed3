import type { RouteRecordRaw } from 'vue-router'
import type { Role } from '#shared/schemas/enums'
import { useSessionStore } from '@/stores/session'

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
        // The inspector passes the role check only to be sent on: their first screen is the signed-off record.
        meta: { title: 'Closures', roles: [...fieldRoles, 'inspector'] },
        beforeEnter: () => (useSessionStore().user?.role === 'inspector' ? { name: 'inspect' } : true),
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
        path: 'crew',
        name: 'crew-board',
        component: () => import('@/pages/CrewBoardPage.vue'),
        meta: { title: 'Crew board', roles: ['foreman'] },
      },
      {
        path: 'crew/day',
        name: 'crew-day',
        component: () => import('@/pages/CrewDayPage.vue'),
        meta: { title: "The crew's day", roles: ['foreman'] },
      },
      {
        path: 'crew/review/:closureId',
        name: 'closure-review',
        component: () => import('@/pages/ClosureReviewPage.vue'),
        meta: { title: 'Closure review', roles: ['foreman'] },
      },
      {
        path: 'inspect',
        name: 'inspect',
        component: () => import('@/pages/InspectorClosuresPage.vue'),
        meta: { title: 'Signed-off closures', roles: ['inspector'] },
      },
      {
        path: 'inspect/:closureId',
        name: 'inspect-closure',
        component: () => import('@/pages/InspectorClosurePage.vue'),
        meta: { title: 'Closure record', roles: ['inspector'] },
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
        path: 'office/projects/:projectId/otdr',
        name: 'office-otdr-import',
        component: () => import('@/pages/office/OfficeOtdrImportPage.vue'),
        meta: { title: 'OTDR import', roles: officeRoles },
      },
      {
        path: 'office/projects/:projectId/reconciliation',
        name: 'office-reconciliation',
        component: () => import('@/pages/office/OfficeReconciliationPage.vue'),
        meta: { title: 'Reconciliation', roles: officeRoles },
      },
      {
        path: 'office/projects/:projectId/fiber-path',
        name: 'office-fiber-path',
        component: () => import('@/pages/office/OfficeFiberPathPage.vue'),
        meta: { title: 'Fiber path', roles: officeRoles },
      },
      {
        path: 'office/projects/:projectId/loss-budget',
        name: 'office-loss-budget',
        component: () => import('@/pages/office/OfficeLossBudgetPage.vue'),
        meta: { title: 'Loss budget', roles: officeRoles },
      },
      {
        path: 'office/projects/:projectId/reports',
        name: 'office-reports',
        component: () => import('@/pages/office/OfficeReportsPage.vue'),
        meta: { title: 'Reports', roles: officeRoles },
      },
      {
        path: 'office/audit/:entity/:entityId',
        name: 'office-audit',
        component: () => import('@/pages/office/OfficeAuditPage.vue'),
        meta: { title: 'History', roles: officeRoles },
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
