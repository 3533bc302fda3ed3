import { Router } from 'express'
import { pageQuerySchema } from '#shared/schemas/index'
import type { AppContext } from '../context'
import { parse, route } from '../http'
import * as people from '../services/people'

export function peopleRouter(ctx: AppContext): Router {
  const router = Router()
  route(ctx, router, 'GET /api/users', (req, res) => {
    res.json(people.listUsers(ctx, req.query))
  })
  route(ctx, router, 'POST /api/users', (req, res) => {
    res.status(201).json(people.createUser(ctx, res.locals.actor, req.body))
  })
  route(ctx, router, 'PATCH /api/users/:userId', (req, res) => {
    res.json(people.updateUser(ctx, res.locals.actor, req.params.userId, req.body))
  })
  route(ctx, router, 'GET /api/crews', (req, res) => {
    res.json(people.listCrews(ctx, parse(pageQuerySchema, req.query)))
  })
  route(ctx, router, 'POST /api/crews', (req, res) => {
    res.status(201).json(people.createCrew(ctx, res.locals.actor, req.body))
  })
  route(ctx, router, 'PATCH /api/crews/:crewId', (req, res) => {
    res.json(people.updateCrew(ctx, res.locals.actor, req.params.crewId, req.body))
  })
  return router
}
