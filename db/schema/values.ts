// Value lists the shared schemas do not define (yet); they move to shared/schemas/enums.ts once they do.

/** A foreman's verdict on a flagged splice; null until reviewed. */
export const reviewStates = ['accepted', 'sent_back'] as const
export type ReviewState = (typeof reviewStates)[number]

/** Records a photo can be attached to. */
export const photoEntities = ['splice', 'tray', 'closure'] as const
export type PhotoEntity = (typeof photoEntities)[number]

/** Records an add-only note can be attached to. */
export const noteEntities = ['closure', 'splice'] as const
export type NoteEntity = (typeof noteEntities)[number]

/** What happened to a change, as the audit trail records it. */
export const auditOutcomes = [
  'applied',
  'merged',
  'created',
  'deleted',
  'conflict_lost',
  'rejected',
  'reapplied',
] as const
export type AuditOutcome = (typeof auditOutcomes)[number]
