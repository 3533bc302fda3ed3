import type { MutationName } from '#shared/schemas/sync'

// How each kind of change reads to the person who made it.
const changeWords: Record<MutationName, string> = {
  createSplice: 'Logged splice',
  resplice: 'Re-splice',
  updateSplice: 'Edit of a splice',
  deleteSplice: 'Removed splice',
  addPhotoLink: 'Photo',
  removePhotoLink: 'Removed photo',
  addNote: 'Note',
  setClosurePosition: 'Closure position',
  signOffClosure: 'Closure sign-off',
  reopenClosure: 'Closure reopened',
  reviewSplice: 'Splice review',
}

const fieldWords: Record<string, string> = {
  lossDb: 'Estimated loss',
  notes: 'Note',
  method: 'Method',
  slot: 'Slot',
  trayId: 'Tray',
  fiberA: 'Fiber on side A',
  fiberB: 'Fiber on side B',
  cableAId: 'Cable on side A',
  cableBId: 'Cable on side B',
  respliceReason: 'Re-splice reason',
  respliceNote: 'Re-splice note',
  acceptReason: 'Reason for keeping it',
}

/** The words for a kind of change; unknown names are shown as they are. */
export function changeName(name: string): string {
  return changeWords[name as MutationName] ?? name
}

/** The words for a splice field; unknown fields are shown as they are. */
export function fieldName(field: string): string {
  return fieldWords[field] ?? field
}
