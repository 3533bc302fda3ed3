import { z } from 'zod'
import {
  boardPageSchema,
  cableSchema,
  closureSchema,
  pageSchema,
  planRowSchema,
  projectSchema,
  spliceSchema,
  traySchema,
} from '#shared/schemas/index'
import { api, type Query } from './http'

/** The office screens' calls to the REST API, each answer parsed with the shared schema. */
const loose = <T extends z.ZodType>(item: T) => pageSchema(item)

export const listProjects = () =>
  api('GET', '/api/projects', { query: { limit: 500 }, schema: loose(projectSchema) })
export const getProject = (id: string) => api('GET', `/api/projects/${id}`, { schema: projectSchema })
export const createProject = (body: unknown) =>
  api('POST', '/api/projects', { json: body, schema: projectSchema })
export const updateProject = (id: string, body: unknown) =>
  api('PATCH', `/api/projects/${id}`, { json: body, schema: projectSchema })

export const listCables = (projectId: string) =>
  api('GET', `/api/projects/${projectId}/cables`, { query: { limit: 500 }, schema: loose(cableSchema) })
export const getCable = (id: string) => api('GET', `/api/cables/${id}`, { schema: cableSchema })
export const createCable = (projectId: string, body: unknown) =>
  api('POST', `/api/projects/${projectId}/cables`, { json: body, schema: cableSchema })
export const updateCable = (id: string, body: unknown) =>
  api('PATCH', `/api/cables/${id}`, { json: body, schema: cableSchema })

export const listClosures = (projectId: string) =>
  api('GET', `/api/projects/${projectId}/closures`, { query: { limit: 500 }, schema: loose(closureSchema) })
export const getClosure = (id: string) => api('GET', `/api/closures/${id}`, { schema: closureSchema })
export const createClosure = (projectId: string, body: unknown) =>
  api('POST', `/api/projects/${projectId}/closures`, { json: body, schema: closureSchema })
export const updateClosure = (id: string, body: unknown) =>
  api('PATCH', `/api/closures/${id}`, { json: body, schema: closureSchema })

/** A project's cables and closures together, as the screens that pick one of either need them. */
export async function listProjectPlant(projectId: string) {
  const [cables, closures] = await Promise.all([listCables(projectId), listClosures(projectId)])
  return { cables: cables.items, closures: closures.items }
}

export const listTrays = (closureId: string) =>
  api('GET', `/api/closures/${closureId}/trays`, { query: { limit: 500 }, schema: loose(traySchema) })
export const createTray = (closureId: string, body: unknown) =>
  api('POST', `/api/closures/${closureId}/trays`, { json: body, schema: traySchema })
export const updateTray = (id: string, body: unknown) =>
  api('PATCH', `/api/trays/${id}`, { json: body, schema: traySchema })

export const listPlan = (closureId: string) =>
  api('GET', `/api/closures/${closureId}/plan`, { query: { limit: 500 }, schema: loose(planRowSchema) })
export const uploadPlanCsv = (closureId: string, csv: string) =>
  api('POST', `/api/closures/${closureId}/plan/csv`, { text: { body: csv, contentType: 'text/csv' } })
export const generatePlan = (closureId: string, body: unknown) =>
  api('POST', `/api/closures/${closureId}/plan/generate`, { json: body })
export const updatePlanRow = (id: string, body: unknown) =>
  api('PATCH', `/api/plan-rows/${id}`, { json: body, schema: planRowSchema })
export const deletePlanRow = (id: string) => api('DELETE', `/api/plan-rows/${id}`)

export const listClosureSplices = (closureId: string) =>
  api('GET', '/api/splices', {
    query: { closureId, limit: 500, sort: 'slot', dir: 'asc' },
    schema: loose(spliceSchema),
  })

export const listCrews = () =>
  api('GET', '/api/crews', {
    query: { limit: 500 },
    schema: loose(z.object({ id: z.string(), name: z.string() }).passthrough()),
  })

export const readBoard = (projectId: string, query: Query) =>
  api('GET', `/api/projects/${projectId}/board`, {
    query: { ...query, summary: true },
    schema: boardPageSchema,
  })

export const auditEntrySchema = z.object({
  id: z.number(),
  at: z.string(),
  userId: z.string().nullable(),
  userName: z.string().nullable(),
  clientId: z.string().nullable(),
  field: z.string().nullable(),
  oldValue: z.unknown(),
  newValue: z.unknown(),
  outcome: z.string(),
  mutationSeq: z.number().nullable(),
})
export type AuditEntry = z.infer<typeof auditEntrySchema>

export const readAudit = (entity: string, entityId: string, page: { limit: number; offset: number }) =>
  api('GET', '/api/audit', { query: { entity, entityId, ...page }, schema: loose(auditEntrySchema) })
