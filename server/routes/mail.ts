import { Router } from 'express'
import type { AppContext } from '../context'
import { route } from '../http'
import { listMailbox, mailboxAttachment, readMailboxMessage } from '../mail/mailbox'
import { inviteUser, requestPasswordReset, sendProductionReportNow, usePasswordToken } from '../services/mail'
import { sendFile } from './reports'

/** Invitations, password resets, the production report on demand and the demo mailbox. */
export function mailRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'POST /api/invitations', async (req, res) => {
    res.status(201).json(await inviteUser(ctx, res.locals.actor, req.body))
  })
  route(ctx, router, 'POST /api/auth/invitation/accept', (req, res) => {
    res.json(usePasswordToken(ctx, 'invitation', req.body))
  })
  route(ctx, router, 'POST /api/auth/password-reset', async (req, res) => {
    res.status(202).json(await requestPasswordReset(ctx, req.body))
  })
  route(ctx, router, 'POST /api/auth/password-reset/confirm', (req, res) => {
    res.json(usePasswordToken(ctx, 'reset', req.body))
  })
  route(ctx, router, 'POST /api/projects/:projectId/production-report', async (req, res) => {
    res.json(await sendProductionReportNow(ctx, res.locals.actor, req.params.projectId, req.body))
  })
  route(ctx, router, 'GET /api/mailbox', async (_req, res) => {
    res.json(await listMailbox(ctx.config.mail.dir))
  })
  route(ctx, router, 'GET /api/mailbox/:messageId', async (req, res) => {
    res.json(await readMailboxMessage(ctx.config.mail.dir, String(req.params.messageId)))
  })
  route(ctx, router, 'GET /api/mailbox/:messageId/attachments/:index', async (req, res) => {
    sendFile(
      res,
      await mailboxAttachment(ctx.config.mail.dir, String(req.params.messageId), req.params.index),
    )
  })
  return router
}
