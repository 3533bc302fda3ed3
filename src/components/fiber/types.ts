import type { Cable } from '#shared/schemas/cable'

/** The parts of a cable the fiber components read: its label and how its fibers are numbered. */
export type FiberCable = Pick<
  Cable,
  | 'id'
  | 'label'
  | 'fiberCount'
  | 'construction'
  | 'fibersPerUnit'
  | 'unitCounts'
  | 'ribbonsPerTube'
  | 'colourScheme'
>
