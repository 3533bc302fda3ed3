import { respliceReasons, type RespliceReason } from '#shared/schemas/enums'

/** What the re-splice picker edits: a reason from the list, and words of the splicer's own. */
export type RespliceChoice = { reason: RespliceReason | null; note: string }

/** The longest note a splice keeps (shared/schemas/splice.ts respliceNote). */
export const respliceNoteMax = 500

/** Words for each reason, as splicers say them (REFERENCE.md §6, common practice). */
export const respliceReasonLabels: Readonly<Record<RespliceReason, string>> = {
  high_loss: 'High estimated loss',
  bad_cleave: 'Bad cleave (angle, chip, lip or hackle)',
  bubble: 'Bubble in the splice',
  fat_or_thin: 'Fat or thin splice',
  dust_line: 'Dust line',
  core_offset: 'Core offset',
  fiber_break: 'Fiber broke at proof test or heat-shrink',
  wrong_fiber: 'Wrong fiber spliced',
  macrobend: 'Macrobend found after closing the tray',
  other: 'Other (say what happened)',
}

export const respliceReasonOptions = respliceReasons.map((value) => ({
  value,
  label: respliceReasonLabels[value],
}))

/** Says what is missing from a choice before it can be saved, or null when it is complete. */
export function respliceChoiceProblem(choice: RespliceChoice): string | null {
  if (choice.reason === null) return 'Pick why the splice is being made again.'
  if (choice.note.length > respliceNoteMax) return `Keep the note within ${respliceNoteMax} characters.`
  if (choice.reason === 'other' && choice.note.trim() === '')
    return 'Say what happened: a note is needed for "Other".'
  return null
}
