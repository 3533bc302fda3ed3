import express, { Router } from 'express'
import { z } from 'zod'
import { pageQuerySchema } from '#shared/schemas/index'
import type { AppContext } from '../context'
import { AppError } from '../errors'
import { parse, route, routeAccepting } from '../http'
import * as closures from '../services/closures'
import * as plans from '../services/plans'
import * as reports from '../services/reports'

const planQuerySchema = pageQuerySchema.extend({ template: z.literal('csv').optional() }).strict()

export function closuresRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'GET /api/projects/:projectId/closures', (req, res) => {
    res.json(closures.listClosures(ctx, res.locals.actor, req.params.projectId, req.query))
  })
  route(ctx, router, 'POST /api/projects/:projectId/closures', (req, res) => {
    res.status(201).json(closures.createClosure(ctx, res.locals.actor, req.params.projectId, req.body))
  })
  route(ctx, router, 'GET /api/closures/:closureId', (req, res) => {
    const closure = closures.getClosure(ctx, res.locals.actor, req.params.closureId)
    res.json({ ...closure, assignment: closures.getAssignment(ctx, closure.id) })
  })
  route(ctx, router, 'PATCH /api/closures/:closureId', (req, res) => {
    res.json(closures.updateClosure(ctx, res.locals.actor, req.params.closureId, req.body))
  })
  route(ctx, router, 'PUT /api/closures/:closureId/assignment', (req, res) => {
    res.json(closures.assignClosure(ctx, res.locals.actor, req.params.closureId, req.body))
  })
  route(ctx, router, 'GET /api/crews/:crewId/day', (req, res) => {
    res.json(closures.crewDay(ctx, res.locals.actor, req.params.crewId))
  })
  route(ctx, router, 'PUT /api/crews/:crewId/day', (req, res) => {
    res.json(closures.setCrewDay(ctx, res.locals.actor, req.params.crewId, req.body))
  })
  route(ctx, router, 'GET /api/closures/:closureId/rollup', (req, res) => {
    res.json(reports.rollup(ctx, res.locals.actor, req.params.closureId))
  })

  route(ctx, router, 'GET /api/closures/:closureId/trays', (req, res) => {
    res.json(
      closures.listTrays(ctx, res.locals.actor, req.params.closureId, parse(pageQuerySchema, req.query)),
    )
  })
  route(ctx, router, 'POST /api/closures/:closureId/trays', (req, res) => {
    res.status(201).json(closures.createTray(ctx, res.locals.actor, req.params.closureId, req.body))
  })
  route(ctx, router, 'PATCH /api/trays/:trayId', (req, res) => {
    res.json(closures.updateTray(ctx, res.locals.actor, req.params.trayId, req.body))
  })

  route(ctx, router, 'GET /api/closures/:closureId/plan', (req, res) => {
    const { template, ...page } = parse(planQuerySchema, req.query)
    if (template) {
      closures.getClosure(ctx, res.locals.actor, req.params.closureId)
      res.type('text/csv').attachment('splice-plan-template.csv').send(plans.planCsvTemplate)
      return
    }
    res.json(plans.listPlan(ctx, res.locals.actor, req.params.closureId, page))
  })
  route(ctx, router, 'POST /api/closures/:closureId/plan', (req, res) => {
    res.status(201).json(plans.addPlanRow(ctx, res.locals.actor, req.params.closureId, req.body))
  })
  routeAccepting(
    ctx,
    router,
    'POST /api/closures/:closureId/plan/csv',
    ['text/csv', 'text/plain'],
    express.text({ type: ['text/csv', 'text/plain'], limit: '2mb' }),
    (req, res) => {
      if (typeof req.body !== 'string' || req.body.length === 0) {
        throw new AppError('invalid_csv', 'Send the plan as a text/csv body.', 400, [
          { row: 1, field: 'file', code: 'empty', message: 'The file is empty: start with the header line.' },
        ])
      }
      res.status(201).json(plans.uploadPlanCsv(ctx, res.locals.actor, req.params.closureId, req.body))
    },
  )
  route(ctx, router, 'POST /api/closures/:closureId/plan/generate', (req, res) => {
    res.status(201).json(plans.generatePlan(ctx, res.locals.actor, req.params.closureId, req.body))
  })
  route(ctx, router, 'PATCH /api/plan-rows/:rowId', (req, res) => {
    res.json(plans.updatePlanRow(ctx, res.locals.actor, req.params.rowId, req.body))
  })
  route(ctx, router, 'DELETE /api/plan-rows/:rowId', (req, res) => {
    plans.deletePlanRow(ctx, res.locals.actor, req.params.rowId)
    res.status(204).end()
  })
  return router
}
