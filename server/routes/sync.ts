import { Router } from 'express'
import type { AppContext } from '../context'
import { route } from '../http'
import { afterPush } from '../services/mail'
import { listRejected, pushMutations, reapplyRejected } from '../services/sync'
import { pullChanges } from '../services/syncPull'

/** Push, pull and the quarantine of refused changes (SYNC.md). */
export function syncRouter(ctx: AppContext): Router {
  const router = Router()
  // The body arrives parsed by the API's JSON parser, which already caps it at 1 MiB (SYNC.md).
  route(ctx, router, 'POST /api/sync/push', (req, res) => {
    const answer = pushMutations(ctx, res.locals.actor, req.body)
    res.json(answer)
    // The batch has committed: sign-off messages go out now, outside the transaction, and never fail the sync.
    afterPush(
      ctx,
      (req.body as { mutations: { seq: number; name: string; args: unknown }[] }).mutations,
      answer.results,
    )
  })
  route(ctx, router, 'GET /api/sync/pull', (req, res) => {
    res.json(pullChanges(ctx, res.locals.actor, req.query))
  })
  route(ctx, router, 'GET /api/sync/rejected', (req, res) => {
    res.json(listRejected(ctx, res.locals.actor, req.query))
  })
  route(ctx, router, 'POST /api/sync/rejected/:rejectedId/reapply', (req, res) => {
    // A re-applied sign-off mails the office as a pushed one does, once it has committed.
    res.json(
      reapplyRejected(ctx, res.locals.actor, req.params.rejectedId, (mutation, result) =>
        afterPush(ctx, [mutation], [result]),
      ),
    )
  })
  return router
}
