import { Router } from 'express'
import { pageQuerySchema } from '#shared/schemas/index'
import type { AppContext } from '../context'
import { parse, route } from '../http'
import * as projects from '../services/projects'

export function projectsRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'GET /api/projects', (req, res) => {
    res.json(projects.listProjects(ctx, res.locals.actor, parse(pageQuerySchema, req.query)))
  })
  route(ctx, router, 'POST /api/projects', (req, res) => {
    res.status(201).json(projects.createProject(ctx, res.locals.actor, req.body))
  })
  route(ctx, router, 'GET /api/projects/:projectId', (req, res) => {
    res.json(projects.getProject(ctx, res.locals.actor, req.params.projectId))
  })
  route(ctx, router, 'PATCH /api/projects/:projectId', (req, res) => {
    res.json(projects.updateProject(ctx, res.locals.actor, req.params.projectId, req.body))
  })
  route(ctx, router, 'GET /api/projects/:projectId/cables', (req, res) => {
    res.json(
      projects.listCables(ctx, res.locals.actor, req.params.projectId, parse(pageQuerySchema, req.query)),
    )
  })
  route(ctx, router, 'POST /api/projects/:projectId/cables', (req, res) => {
    res.status(201).json(projects.createCable(ctx, res.locals.actor, req.params.projectId, req.body))
  })
  route(ctx, router, 'GET /api/cables/:cableId', (req, res) => {
    res.json(projects.getCable(ctx, res.locals.actor, req.params.cableId))
  })
  route(ctx, router, 'PATCH /api/cables/:cableId', (req, res) => {
    res.json(projects.updateCable(ctx, res.locals.actor, req.params.cableId, req.body))
  })
  return router
}
