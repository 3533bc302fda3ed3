import { currentServerSeq } from '#db/client'
import { type Change, pullQuerySchema, type PullResponse } from '#shared/schemas/sync'
import type { AppContext } from '../context'
import type { Actor } from '../middleware/auth'
import {
  anyAfter,
  arrivedClosures,
  type ChangedRow,
  closureSubtree,
  departedClosures,
  type PullScope,
  rowsBetween,
  seqsAfter,
  sources,
} from '../repositories/changes'
import { findSyncClient } from '../repositories/syncLog'

function scopeOf(actor: Actor): PullScope {
  switch (actor.role) {
    case 'office':
      return { kind: 'all' }
    case 'inspector':
      return { kind: 'signedOff' }
    case 'foreman':
    case 'splicer':
      return { kind: 'crew', crewId: actor.crewId }
  }
}

/**
 * One page of changes the actor may see after `cursor`, in server_seq order.
 *
 * Paging: a page holds the rows of the first `limit` changed rows' sequence values and then every other row
 * of its last value, because one transaction stamps one value on many rows; a cursor inside a value could
 * skip the rest of it. A page can therefore be longer than `limit`.
 *
 * Scope changes: a closure the actor no longer sees but once did (moved to another crew; reopened, for an
 * inspector) comes as a closure tombstone without a row, meaning "drop it and everything under it"; a
 * closure that came into scope brings its older rows (trays, plan, splices, photos, notes, assignments,
 * project, cables) along, stamped with the change that brought it in.
 */
export function pullChanges(ctx: AppContext, actor: Actor, query: unknown): PullResponse {
  const q = pullQuerySchema.parse(query)
  const sqlite = ctx.database.sqlite
  const scope = scopeOf(actor)
  // One read transaction: the head value and every row come from the same snapshot of the WAL.
  const read = sqlite.transaction((): PullResponse => {
    const head = currentServerSeq(sqlite)
    const client = q.clientId ? findSyncClient(sqlite, q.clientId) : undefined
    const lastMutationSeq = client && client.userId === actor.id ? client.lastSeq : 0
    if (q.cursor >= head) return { changes: [], cursor: head, hasMore: false, lastMutationSeq }

    // Pass 1: the sequence values of the first `limit` visible rows, over every table.
    const seqs = sources.flatMap((source) => seqsAfter(sqlite, source, scope, q.cursor, q.limit + 1))
    seqs.push(...departedClosures(sqlite, scope, q.cursor, null, q.limit + 1).map((row) => row.serverSeq))
    seqs.sort((a, b) => a - b)
    const complete = seqs.length <= q.limit
    const upTo = complete ? head : seqs[q.limit - 1]!

    // Pass 2: every visible row up to that value, the last one whole.
    const changes = new Map<string, ChangedRow | Change>()
    const put = (change: ChangedRow | Change) => {
      const key = `${change.table}:${change.id}`
      const had = changes.get(key)
      if (!had || had.serverSeq < change.serverSeq) changes.set(key, change)
    }
    for (const closure of arrivedClosures(sqlite, scope, q.cursor, upTo)) {
      for (const change of closureSubtree(sqlite, closure, q.cursor, closure.serverSeq)) put(change)
    }
    for (const source of sources)
      for (const change of rowsBetween(sqlite, source, scope, q.cursor, upTo)) put(change)
    for (const closure of departedClosures(sqlite, scope, q.cursor, upTo)) {
      put({ table: 'closures', id: closure.id, serverSeq: closure.serverSeq, deleted: true, row: null })
    }
    const order = new Map(sources.map((source, i) => [source.table, i]))
    const list = [...changes.values()].sort(
      (a, b) =>
        a.serverSeq - b.serverSeq ||
        order.get(a.table)! - order.get(b.table)! ||
        (a.id < b.id ? -1 : a.id > b.id ? 1 : 0),
    )
    const hasMore =
      !complete &&
      (sources.some((source) => anyAfter(sqlite, source, scope, upTo)) ||
        departedClosures(sqlite, scope, upTo, null, 1).length > 0)
    // Nothing visible lies between upTo and head when the page is the last: the cursor can jump to head.
    return { changes: list, cursor: hasMore ? upTo : head, hasMore, lastMutationSeq }
  })
  return read.deferred()
}
