import type { Role } from '#shared/schemas/enums'

/**
 * Who may call which route. This table is the single source of truth: every route the API registers must
 * have a line here (the permission-matrix test fails otherwise), and `route()` refuses to register one
 * that does not. Record-level scope is applied by the services on top of the role check:
 * splicer and foreman reach their own crew's closures, office reaches everything, and the inspector
 * reads signed-off work only. Another crew's record answers 404, never 403, so ids cannot be probed.
 */
export interface Rule {
  /** `public` needs no sign-in; otherwise the roles that pass the role check. */
  roles: 'public' | readonly Role[]
  /** How the service narrows the records: none, the caller's own account, or the closure's crew/state. */
  scope: 'none' | 'self' | 'closure' | 'project'
}

const everyone = ['splicer', 'foreman', 'office', 'inspector'] as const
const leads = ['foreman', 'office'] as const
const office = ['office'] as const
const reviewers = ['foreman', 'office', 'inspector'] as const
// Everyone who records work; the inspector only reads.
const writers = ['splicer', 'foreman', 'office'] as const

export const policy = {
  'GET /api/health': { roles: 'public', scope: 'none' },
  'GET /api/ready': { roles: 'public', scope: 'none' },
  'POST /api/auth/sign-in': { roles: 'public', scope: 'none' },
  'POST /api/auth/refresh': { roles: 'public', scope: 'none' },
  'POST /api/auth/sign-out': { roles: 'public', scope: 'none' },
  'GET /api/auth/me': { roles: everyone, scope: 'self' },

  'GET /api/projects': { roles: everyone, scope: 'project' },
  'POST /api/projects': { roles: office, scope: 'none' },
  'GET /api/projects/:projectId': { roles: everyone, scope: 'project' },
  'PATCH /api/projects/:projectId': { roles: office, scope: 'project' },

  'GET /api/projects/:projectId/cables': { roles: everyone, scope: 'project' },
  'POST /api/projects/:projectId/cables': { roles: office, scope: 'project' },
  'GET /api/cables/:cableId': { roles: everyone, scope: 'project' },
  'PATCH /api/cables/:cableId': { roles: office, scope: 'project' },

  'GET /api/projects/:projectId/closures': { roles: everyone, scope: 'closure' },
  'POST /api/projects/:projectId/closures': { roles: office, scope: 'project' },
  'GET /api/closures/:closureId': { roles: everyone, scope: 'closure' },
  'PATCH /api/closures/:closureId': { roles: office, scope: 'closure' },
  'PUT /api/closures/:closureId/assignment': { roles: leads, scope: 'closure' },
  'GET /api/closures/:closureId/rollup': { roles: everyone, scope: 'closure' },

  'GET /api/closures/:closureId/trays': { roles: everyone, scope: 'closure' },
  'POST /api/closures/:closureId/trays': { roles: office, scope: 'closure' },
  'PATCH /api/trays/:trayId': { roles: office, scope: 'closure' },

  'GET /api/closures/:closureId/plan': { roles: everyone, scope: 'closure' },
  'POST /api/closures/:closureId/plan': { roles: office, scope: 'closure' },
  'POST /api/closures/:closureId/plan/csv': { roles: office, scope: 'closure' },
  'POST /api/closures/:closureId/plan/generate': { roles: office, scope: 'closure' },
  'PATCH /api/plan-rows/:rowId': { roles: office, scope: 'closure' },
  'DELETE /api/plan-rows/:rowId': { roles: office, scope: 'closure' },

  'GET /api/splices': { roles: everyone, scope: 'closure' },
  'GET /api/splices/:spliceId': { roles: everyone, scope: 'closure' },

  'GET /api/projects/:projectId/board': { roles: reviewers, scope: 'closure' },
  'GET /api/projects/:projectId/production': { roles: leads, scope: 'closure' },
  'GET /api/audit': { roles: reviewers, scope: 'closure' },

  // Each pushed mutation is authorized again when it is applied (role, crew, closure, author).
  'POST /api/sync/push': { roles: writers, scope: 'closure' },
  'GET /api/sync/pull': { roles: everyone, scope: 'closure' },
  'GET /api/sync/rejected': { roles: writers, scope: 'closure' },
  'POST /api/sync/rejected/:rejectedId/reapply': { roles: leads, scope: 'closure' },

  // Photos are read by whoever may read a record linked to them; HEAD also tells the uploader it is stored.
  'HEAD /api/photos/:sha256': { roles: everyone, scope: 'closure' },
  'GET /api/photos/:sha256': { roles: everyone, scope: 'closure' },
  'PUT /api/photos/:sha256': { roles: writers, scope: 'none' },

  'GET /api/users': { roles: office, scope: 'none' },
  'POST /api/users': { roles: office, scope: 'none' },
  'PATCH /api/users/:userId': { roles: office, scope: 'none' },
  'GET /api/crews': { roles: leads, scope: 'none' },
  'POST /api/crews': { roles: office, scope: 'none' },
  'PATCH /api/crews/:crewId': { roles: office, scope: 'none' },
  // A crew's day: each member's closures in order; a foreman reads and sets their own crew's only.
  'GET /api/crews/:crewId/day': { roles: leads, scope: 'closure' },
  'PUT /api/crews/:crewId/day': { roles: leads, scope: 'closure' },

  'GET /api/projects/:projectId/otdr/template': { roles: office, scope: 'project' },
  'POST /api/projects/:projectId/otdr/imports': { roles: office, scope: 'project' },
  'GET /api/closures/:closureId/reconciliation': { roles: reviewers, scope: 'closure' },
  'GET /api/cables/:cableId/reconciliation': { roles: reviewers, scope: 'closure' },
  'GET /api/projects/:projectId/fiber-path': { roles: office, scope: 'project' },
  'GET /api/projects/:projectId/loss-budget': { roles: office, scope: 'project' },
  'PUT /api/projects/:projectId/loss-budget': { roles: office, scope: 'project' },

  // Reports: exports and the close-out PDF follow closure scope (foreman own crew, inspector signed-off work).
  'GET /api/closures/:closureId/export/splices': { roles: reviewers, scope: 'closure' },
  'GET /api/projects/:projectId/export/splices': { roles: reviewers, scope: 'closure' },
  'GET /api/projects/:projectId/export/board': { roles: reviewers, scope: 'closure' },
  'GET /api/closures/:closureId/close-out': { roles: reviewers, scope: 'closure' },

  // Mail: invitations and resets by single-use link; the demo mailbox reads the local fake SMTP server.
  'POST /api/invitations': { roles: office, scope: 'none' },
  'POST /api/auth/invitation/accept': { roles: 'public', scope: 'none' },
  'POST /api/auth/password-reset': { roles: 'public', scope: 'none' },
  'POST /api/auth/password-reset/confirm': { roles: 'public', scope: 'none' },
  'POST /api/projects/:projectId/production-report': { roles: office, scope: 'none' },
  'GET /api/mailbox': { roles: office, scope: 'none' },
  'GET /api/mailbox/:messageId': { roles: office, scope: 'none' },
  'GET /api/mailbox/:messageId/attachments/:index': { roles: office, scope: 'none' },
} as const satisfies Record<string, Rule>

export type RouteKey = keyof typeof policy

/** The rule for a route key, or undefined when the table has no line for it. */
export function ruleFor(key: string): Rule | undefined {
  return (policy as Record<string, Rule>)[key]
}
