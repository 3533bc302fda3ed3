import { ZodError, z } from 'zod'
import {
  currentServerSeq,
  dropHeldServerSeq,
  holdServerSeq,
  nextServerSeq,
  type Sqlite,
  writeHeldServerSeq,
  writeTransaction,
} from '#db/client'
import {
  type Mutation,
  type MutationName,
  type MutationResult,
  pushBodySchema,
  type PushResponse,
} from '#shared/schemas/sync'
import type { SyncTestHooks } from '../config'
import type { AppContext } from '../context'
import { AppError, notFound } from '../errors'
import type { Actor } from '../middleware/auth'
import { dropHeldAuditRows, holdAuditRows, recordEvent, writeHeldAuditRows } from '../repositories/audit'
import { SpliceWriteError } from '../repositories/splices'
import {
  advanceSyncClient,
  bindSyncClient,
  dropHeldAnswers,
  findRejected,
  findSyncClient,
  holdAnswers,
  listRejectedRows,
  quarantineMutation,
  type RejectedRow,
  resolveRejected,
  storedResult,
  storeResult,
  writeHeldAnswers,
} from '../repositories/syncLog'
import { closureFacts } from '../repositories/syncReads'
import { canSeeClosure } from './access'
import {
  applyMutation,
  auditTargetOf,
  type BatchMemo,
  closureOfPayload,
  deferrableTotals,
  newBatchMemo,
  refuse,
  refusalCodes,
  type RefusalCode,
} from './syncApply'

/** What applied_mutations keeps: the answer as given, and the change sequence value it was applied at. */
type StoredResult = MutationResult & { serverSeq?: number }

const now = () => new Date().toISOString()

// Busy, disk full, I/O and memory trouble are the server's, not the payload's: the device sends the batch again.
const temporaryCodes = /^SQLITE_(BUSY|LOCKED|FULL|IOERR|NOMEM|PROTOCOL)/

/** Tells whether an error is a temporary storage failure (the whole batch is answered 503). */
export function isTemporaryFailure(error: unknown): boolean {
  const code = (error as { code?: unknown } | null)?.code
  return typeof code === 'string' && temporaryCodes.test(code)
}

function zodMessage(error: ZodError): string {
  const issues = error.issues.slice(0, 3).map((issue) => {
    const path = issue.path.map(String).join('.')
    return path ? `${path}: ${issue.message}` : issue.message
  })
  return `The change is not valid: ${issues.join('; ')}`.slice(0, 500)
}

/** The permanent refusal an error stands for, or null when it is not the payload's fault (rethrown). */
function refusalOf(error: unknown): { code: RefusalCode; message: string } | null {
  if (error instanceof ZodError) return { code: 'invalid', message: zodMessage(error) }
  if (error instanceof AppError && (refusalCodes as readonly string[]).includes(error.code))
    return { code: error.code as RefusalCode, message: error.message }
  if (error instanceof SpliceWriteError) {
    return error.code === 'supersedes_unknown'
      ? { code: 'not_found', message: 'The attempt this re-splice replaces was not found.' }
      : { code: 'invalid', message: 'A re-splice stays in the closure of the attempt it replaces.' }
  }
  const code = (error as { code?: unknown } | null)?.code
  // A constraint the checks above missed (an id reused across devices, say): the payload cannot apply as sent.
  if (typeof code === 'string' && code.startsWith('SQLITE_CONSTRAINT'))
    return { code: 'conflict', message: 'The change clashes with a record already stored.' }
  return null
}

/** Blocks the process inside the open batch transaction so the kill test can SIGKILL it there. */
function pauseForKill(hooks: SyncTestHooks, handled: number, total: number): void {
  if (hooks.pauseAfterMutation !== handled) return
  // A pipe write is synchronous on POSIX, so the marker is out before the wait begins.
  process.stdout.write(`lightseam-test: paused after mutation ${handled} of ${total}\n`)
  Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, 10 * 60_000)
}

interface Attempt {
  actor: Actor
  clientId: string
  mutation: Pick<Mutation, 'seq' | 'name' | 'args' | 'baseServerSeq' | 'clientTime'>
  at: string
  memo: BatchMemo
}

/** Thrown out of an unguarded batch when a mutation is refused: the batch is rolled back and run again guarded. */
class RunGuarded extends Error {
  override name = 'RunGuarded'
}

/** The mutation's effect, in whatever transaction or savepoint is open, stamped with `serverSeq`. */
function apply(ctx: AppContext, work: Attempt, index: number, serverSeq: number): StoredResult {
  const { actor, clientId, mutation, at, memo } = work
  ctx.config.syncTestHooks.beforeApply?.(mutation, index)
  // A device cannot have seen a change that does not exist yet; a base from the future would switch
  // conflict detection off and let a value be replaced without a trace.
  if (mutation.baseServerSeq >= serverSeq) {
    throw refuse('invalid', 'The change claims to build on server changes that do not exist yet.')
  }
  const outcome = applyMutation(
    {
      conn: ctx.database.sqlite,
      actor,
      clientId,
      seq: mutation.seq,
      baseServerSeq: mutation.baseServerSeq,
      clientTime: mutation.clientTime,
      serverSeq,
      at,
      memo,
    },
    mutation.name,
    mutation.args,
  )
  return { seq: mutation.seq, ...outcome, serverSeq }
}

/**
 * Applies one mutation in a savepoint of the open transaction. A permanent refusal rolls the savepoint back
 * and comes back as a `rejected` result (the caller quarantines it); anything else is rethrown.
 */
function attempt(ctx: AppContext, work: Attempt, index: number): StoredResult {
  const { mutation, memo } = work
  try {
    const result = writeTransaction(ctx.database.sqlite, (serverSeq) => apply(ctx, work, index, serverSeq))
    memo.totals.keepStaged()
    return result
  } catch (error) {
    // The savepoint is gone, and with it any closure or splice change the mutation made after the memo read it.
    memo.totals.dropStaged()
    memo.closures.clear()
    memo.splices.clear()
    const refusal = refusalOf(error)
    if (!refusal) throw error
    return { seq: mutation.seq, status: 'rejected', ...refusal }
  }
}

/**
 * Applies one mutation straight in the batch transaction, without a savepoint of its own (one costs about
 * a fifth of a pushed splice). A refusal may come after some of the mutation's writes, which only a savepoint
 * could take back alone, so it throws RunGuarded: the whole batch is rolled back and run again with a
 * savepoint per mutation, and answers exactly as if it had been guarded from the start.
 */
function attemptUnguarded(ctx: AppContext, work: Attempt, index: number): StoredResult {
  try {
    const result = apply(ctx, work, index, nextServerSeq(ctx.database.sqlite))
    work.memo.totals.keepStaged()
    return result
  } catch (error) {
    if (refusalOf(error)) throw new RunGuarded()
    throw error
  }
}

function quarantine(sqlite: Sqlite, work: Attempt, result: StoredResult): void {
  const { actor, clientId, mutation, at } = work
  const code = result.code ?? 'rejected'
  const message = result.message ?? ''
  quarantineMutation(sqlite, {
    clientId,
    seq: mutation.seq,
    userId: actor.id,
    name: mutation.name,
    args: mutation.args,
    code,
    message,
    at,
  })
  const target = auditTargetOf(mutation.name, mutation.args) ?? {
    entity: 'mutation',
    entityId: `${clientId}:${mutation.seq}`,
  }
  recordEvent(sqlite, { userId: actor.id, clientId, mutationSeq: mutation.seq, at, ...target }, 'rejected', {
    name: mutation.name,
    code,
    message,
  })
}

/** The answer to a resent seq: the first answer again; a refusal stays a refusal so the device quarantines it. */
function duplicateOf(stored: StoredResult | undefined, seq: number): MutationResult {
  if (!stored) return { seq, status: 'duplicate' }
  const { serverSeq: _serverSeq, ...result } = stored
  return { ...result, seq, status: result.status === 'rejected' ? 'rejected' : 'duplicate' }
}

const publicResult = ({ serverSeq: _serverSeq, ...result }: StoredResult): MutationResult => result

/**
 * Applies a pushed batch in one BEGIN IMMEDIATE transaction and answers for every mutation (applied, merged,
 * duplicate, rejected or gap). Each mutation behaves as if in a savepoint of its own: the batch is first run
 * without them, and only when some mutation is refused is it rolled back and run again with one per mutation.
 */
export function pushMutations(ctx: AppContext, actor: Actor, body: unknown): PushResponse {
  const input = pushBodySchema.parse(body)
  const sqlite = ctx.database.sqlite
  const hooks = ctx.config.syncTestHooks
  const at = now()
  const run = sqlite.transaction((guarded: boolean): PushResponse => {
    const client =
      findSyncClient(sqlite, input.clientId) ?? bindSyncClient(sqlite, input.clientId, actor.id, at)
    if (client.userId !== actor.id) {
      throw new AppError(
        'client_taken',
        'This device id belongs to another user; sign in again to sync.',
        403,
      )
    }
    let lastSeq = client.lastSeq
    // Unguarded, the batch stands or falls whole, so its audit rows, answers and change sequence can wait
    // and go out together.
    if (!guarded) {
      holdAuditRows(sqlite)
      holdAnswers(sqlite)
      holdServerSeq(sqlite)
    }
    const memo = newBatchMemo()
    const results: MutationResult[] = []
    for (const [index, mutation] of input.mutations.entries()) {
      if (mutation.seq <= lastSeq) {
        results.push(
          duplicateOf(storedResult<StoredResult>(sqlite, input.clientId, mutation.seq), mutation.seq),
        )
        continue
      }
      if (mutation.seq > lastSeq + 1) {
        // Nothing after a gap is applied: the device resends from the expected seq, in order.
        const expectedSeq = lastSeq + 1
        for (const rest of input.mutations.slice(index))
          results.push({ seq: rest.seq, status: 'gap', expectedSeq })
        break
      }
      // Anything but a new splice may read or rebuild totals rows, or move and remove splices: the waiting
      // deltas are written first, and the batch's memory of current splices is dropped.
      if (!deferrableTotals.has(mutation.name)) {
        memo.totals.flush(sqlite)
        memo.splices.clear()
      }
      const work: Attempt = { actor, clientId: input.clientId, mutation, at, memo }
      const result = guarded ? attempt(ctx, work, index) : attemptUnguarded(ctx, work, index)
      if (result.status === 'rejected') quarantine(sqlite, work, result)
      storeResult(sqlite, { clientId: input.clientId, seq: mutation.seq, name: mutation.name, result, at })
      lastSeq = mutation.seq
      results.push(publicResult(result))
      pauseForKill(hooks, index + 1, input.mutations.length)
    }
    memo.totals.flush(sqlite)
    writeHeldAuditRows(sqlite)
    writeHeldAnswers(sqlite)
    writeHeldServerSeq(sqlite)
    advanceSyncClient(sqlite, input.clientId, lastSeq, at)
    return { results, lastSeq }
  })
  const runOnce = (guarded: boolean): PushResponse => {
    try {
      return run.immediate(guarded)
    } finally {
      // Written before the commit, or rolled back with the batch: nothing held outlives it.
      dropHeldAuditRows(sqlite)
      dropHeldAnswers(sqlite)
      dropHeldServerSeq(sqlite)
    }
  }
  try {
    try {
      return runOnce(false)
    } catch (error) {
      if (!(error instanceof RunGuarded)) throw error
      return runOnce(true)
    }
  } catch (error) {
    if (isTemporaryFailure(error)) {
      throw new AppError(
        'unavailable',
        'The server could not store the batch just now; send it again.',
        503,
        undefined,
        {
          'Retry-After': '2',
        },
      )
    }
    throw error
  }
}

/** Query of the quarantine list: open ones by default, newest first, paginated. */
export const rejectedQuerySchema = z
  .object({
    state: z.enum(['open', 'resolved', 'all']).default('open'),
    limit: z.coerce.number().int().min(1).max(500).default(50),
    offset: z.coerce.number().int().min(0).default(0),
  })
  .strict()

// The quarantine is a short list worked through by hand; reading this many rows and scoping them here
// keeps the scope rules in one place (canSeeClosure) at no real cost.
const rejectedScanLimit = 5000

/** Whether the actor may see a quarantined payload: office all, leads their crew's closures, splicers their own. */
function seesRejected(
  ctx: AppContext,
  actor: Actor,
  row: RejectedRow,
): { visible: boolean; closureId: string | null } {
  const closureId = closureOfPayload(ctx.database.sqlite, row.name, row.args)
  if (actor.role === 'office') return { visible: true, closureId }
  if (actor.role === 'splicer') return { visible: row.userId === actor.id, closureId }
  const closure = closureId ? closureFacts(ctx.database.sqlite, closureId) : undefined
  return { visible: closure !== undefined && canSeeClosure(actor, closure), closureId }
}

/** Quarantined mutations the actor may see, newest first. */
export function listRejected(ctx: AppContext, actor: Actor, query: unknown) {
  const q = rejectedQuerySchema.parse(query)
  const open = q.state === 'all' ? null : q.state === 'open'
  const items = listRejectedRows(ctx.database.sqlite, open, rejectedScanLimit).flatMap((row) => {
    const { visible, closureId } = seesRejected(ctx, actor, row)
    return visible ? [{ ...row, closureId }] : []
  })
  return {
    items: items.slice(q.offset, q.offset + q.limit),
    total: items.length,
    limit: q.limit,
    offset: q.offset,
  }
}

/** Re-applies one quarantined mutation as the foreman or office user, in one transaction; resolved when it applies. */
export function reapplyRejected(
  ctx: AppContext,
  actor: Actor,
  rejectedId: unknown,
  /** Called once the change has committed, with the mutation and its result (the route mails a sign-off here). */
  onCommitted?: (
    mutation: { seq: number; name: string; args: unknown },
    result: { seq: number; status: string },
  ) => void,
) {
  const id =
    typeof rejectedId === 'string' && /^[1-9][0-9]{0,15}$/.test(rejectedId) ? Number(rejectedId) : NaN
  const row = Number.isSafeInteger(id) ? findRejected(ctx.database.sqlite, id) : undefined
  if (!row) throw notFound('The rejected change')
  const { visible } = seesRejected(ctx, actor, row)
  if (!visible) throw notFound('The rejected change')
  if (row.resolvedAt !== null)
    throw new AppError('already_resolved', 'This change has already been dealt with.', 409)
  const sqlite = ctx.database.sqlite
  const at = now()
  const run = sqlite.transaction(() => {
    const memo = newBatchMemo()
    const result = attempt(
      ctx,
      {
        actor,
        clientId: row.clientId,
        // The lead decides on what the record holds now, so nothing they are shown counts as a conflict.
        mutation: {
          seq: row.seq,
          name: row.name as MutationName,
          args: row.args as Record<string, unknown>,
          baseServerSeq: currentServerSeq(sqlite),
          clientTime: at,
        },
        at,
        memo,
      },
      0,
    )
    memo.totals.flush(sqlite)
    if (result.status !== 'rejected') {
      resolveRejected(sqlite, row.id, at)
      const target = auditTargetOf(row.name, row.args) ?? {
        entity: 'mutation',
        entityId: `${row.clientId}:${row.seq}`,
      }
      recordEvent(
        sqlite,
        { userId: actor.id, clientId: row.clientId, mutationSeq: row.seq, at, ...target },
        'reapplied',
        { rejectedId: row.id, name: row.name },
      )
    }
    return publicResult(result)
  })
  let result: MutationResult
  try {
    result = run.immediate()
  } catch (error) {
    if (isTemporaryFailure(error)) {
      throw new AppError(
        'unavailable',
        'The server could not store this just now; try again.',
        503,
        undefined,
        {
          'Retry-After': '2',
        },
      )
    }
    throw error
  }
  onCommitted?.({ seq: row.seq, name: row.name, args: row.args }, result)
  return { rejectedId: row.id, result }
}
