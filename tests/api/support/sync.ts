import request from 'supertest'
import { v7 as uuidv7 } from 'uuid'
import type { MutationName, PullResponse, PushResponse } from '#shared/schemas/sync'
import { demoUser, type DemoWho, type TestApp } from './app'

// Builders for sync tests: planned slots of the demo scenario, splice args, mutations, push and pull calls.

/** A tray slot of the demo plan, with the fiber pair the plan puts there. */
export interface PlannedSlot {
  closureId: string
  projectId: string
  trayId: string
  slot: number
  cableAId: string
  fiberA: number
  cableBId: string
  fiberB: number
}

/** The planned slot `slot` of tray `trayNumber` in the closure whose label starts with `label`. */
export function plannedSlot(t: TestApp, label: string, trayNumber: number, slot: number): PlannedSlot {
  const row = t.database.sqlite
    .prepare(
      `SELECT c.id AS closureId, c.project_id AS projectId, t.id AS trayId, p.slot, p.cable_a_id AS cableAId,
         p.fiber_a AS fiberA, p.cable_b_id AS cableBId, p.fiber_b AS fiberB
       FROM closures c JOIN trays t ON t.closure_id = c.id AND t.number = ?
       JOIN plan_rows p ON p.tray_id = t.id AND p.slot = ? AND p.deleted = 0
       WHERE c.label LIKE ?`,
    )
    .get(trayNumber, slot, `${label}%`) as PlannedSlot | undefined
  if (!row) throw new Error(`no planned slot ${label} tray ${trayNumber} slot ${slot}`)
  return row
}

/** The id of a demo user. */
export function userId(t: TestApp, who: DemoWho): string {
  return (
    t.database.sqlite.prepare('SELECT id FROM users WHERE email = ?').get(demoUser(who).email) as {
      id: string
    }
  ).id
}

/** The id of the closure whose label starts with `label`. */
export function closureId(t: TestApp, label: string): string {
  return (
    t.database.sqlite.prepare('SELECT id FROM closures WHERE label LIKE ?').get(`${label}%`) as { id: string }
  ).id
}

/** createSplice args for a planned slot, logged by `splicerId` from device `clientId`. */
export function spliceArgs(
  slot: PlannedSlot,
  splicerId: string,
  clientId: string,
  overrides: Record<string, unknown> = {},
): Record<string, unknown> {
  const { projectId: _projectId, ...placement } = slot
  return {
    id: uuidv7(),
    ...placement,
    method: 'single_fusion',
    lossDb: 0.03,
    splicedAt: '2025-06-11T08:15:00.000Z',
    splicerId,
    clientId,
    ...overrides,
  }
}

/** One outbox entry as a device sends it. */
export function mutation(seq: number, name: MutationName, args: Record<string, unknown>, baseServerSeq = 0) {
  return { seq, name, args, baseServerSeq, clientTime: '2025-06-11T08:15:30.000+01:00' }
}

export type Pushed = ReturnType<typeof mutation>

/** POST /api/sync/push as a demo user. */
export async function push(t: TestApp, who: DemoWho, clientId: string, mutations: Pushed[]) {
  return request(t.app)
    .post('/api/sync/push')
    .set('Authorization', await t.tokenFor(who))
    .send({ clientId, schemaVersion: 1, mutations })
}

/** Pushes and expects a 200, returning the typed body. */
export async function pushOk(
  t: TestApp,
  who: DemoWho,
  clientId: string,
  mutations: Pushed[],
): Promise<PushResponse> {
  const res = await push(t, who, clientId, mutations)
  if (res.status !== 200) throw new Error(`push answered ${res.status}: ${JSON.stringify(res.body)}`)
  return res.body as PushResponse
}

/** GET /api/sync/pull as a demo user. */
export async function pull(t: TestApp, who: DemoWho, query: Record<string, string | number> = {}) {
  return request(t.app)
    .get('/api/sync/pull')
    .query(query)
    .set('Authorization', await t.tokenFor(who))
}

/** Pulls every page from `cursor` to the end, returning the pages. */
export async function pullAll(t: TestApp, who: DemoWho, cursor = 0, limit = 500): Promise<PullResponse[]> {
  const pages: PullResponse[] = []
  for (;;) {
    const res = await pull(t, who, { cursor, limit })
    if (res.status !== 200) throw new Error(`pull answered ${res.status}: ${JSON.stringify(res.body)}`)
    const page = res.body as PullResponse
    pages.push(page)
    cursor = page.cursor
    if (!page.hasMore) return pages
  }
}

/** A fresh device id. */
export const newClientId = () => uuidv7()
