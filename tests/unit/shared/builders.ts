import type { Cable } from '#shared/schemas/cable'
import type { PlanRow } from '#shared/schemas/planRow'
import type { Splice } from '#shared/schemas/splice'
import type { Tray } from '#shared/schemas/tray'

/** A stable UUIDv7-shaped id from a small number, so failures print readable ids. */
export function testId(n: number): string {
  return `00000000-0000-7000-8000-${n.toString(16).padStart(12, '0')}`
}

export const ids = {
  project: testId(1),
  closure: testId(2),
  otherClosure: testId(3),
  cableA: testId(10),
  cableB: testId(11),
  tray1: testId(20),
  tray2: testId(21),
  splicer: testId(30),
  otherSplicer: testId(31),
  client: testId(40),
}

export function buildCable(overrides: Partial<Cable> = {}): Cable {
  return {
    id: ids.cableA,
    projectId: ids.project,
    label: 'Feeder F-144',
    fiberCount: 144,
    construction: 'loose_tube',
    fibersPerUnit: 12,
    unitCounts: null,
    ribbonsPerTube: null,
    colourScheme: 'tia598',
    fiberType: 'G.652.D',
    lengthM: 2450,
    ...overrides,
  }
}

export function buildTray(overrides: Partial<Tray> = {}): Tray {
  return { id: ids.tray1, closureId: ids.closure, number: 1, capacity: 12, ...overrides }
}

export function buildPlanRow(overrides: Partial<PlanRow> = {}): PlanRow {
  return {
    id: testId(100),
    closureId: ids.closure,
    trayId: ids.tray1,
    slot: 1,
    cableAId: ids.cableA,
    fiberA: 1,
    cableBId: ids.cableB,
    fiberB: 1,
    ...overrides,
  }
}

export function buildSplice(overrides: Partial<Splice> = {}): Splice {
  return {
    id: testId(200),
    closureId: ids.closure,
    trayId: ids.tray1,
    slot: 1,
    cableAId: ids.cableA,
    fiberA: 1,
    cableBId: ids.cableB,
    fiberB: 1,
    method: 'single_fusion',
    lossDb: 0.02,
    attempt: 1,
    respliceReason: null,
    respliceNote: null,
    supersedesId: null,
    acceptReason: null,
    notes: '',
    splicedAt: '2025-03-14T09:30:00-05:00',
    splicerId: ids.splicer,
    clientId: ids.client,
    ...overrides,
  }
}

/** A copy of `record` without `keys`, for bodies that leave defaulted fields out. */
export function without<T extends object, K extends keyof T>(record: T, ...keys: K[]): Omit<T, K> {
  const copy: Partial<T> = { ...record }
  for (const key of keys) delete copy[key]
  return copy as Omit<T, K>
}
