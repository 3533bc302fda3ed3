import { z } from 'zod'
import {
  fiberPathSchema,
  lossBudgetViewSchema,
  otdrImportResultSchema,
  reconciliationSchema,
  type OtdrImportBody,
} from '#shared/schemas/otdr'
import { api, download } from './http'

/** The office's OTDR, reconciliation, fiber path, loss budget and report calls, answers parsed with the shared schemas. */

export const importOtdr = (projectId: string, body: OtdrImportBody) =>
  api('POST', `/api/projects/${projectId}/otdr/imports`, { json: body, schema: otdrImportResultSchema })
export const otdrTemplate = (projectId: string) => download(`/api/projects/${projectId}/otdr/template`)

export const closureReconciliation = (closureId: string) =>
  api('GET', `/api/closures/${closureId}/reconciliation`, { schema: reconciliationSchema })
export const cableReconciliation = (cableId: string) =>
  api('GET', `/api/cables/${cableId}/reconciliation`, { schema: reconciliationSchema })

export const readFiberPath = (projectId: string, cableId: string, fiber: number) =>
  api('GET', `/api/projects/${projectId}/fiber-path`, { query: { cableId, fiber }, schema: fiberPathSchema })

export const readLossBudget = (projectId: string) =>
  api('GET', `/api/projects/${projectId}/loss-budget`, { schema: lossBudgetViewSchema })
export const saveLossBudget = (projectId: string, body: unknown) =>
  api('PUT', `/api/projects/${projectId}/loss-budget`, { json: body, schema: lossBudgetViewSchema })

export const closureSplicesExport = (closureId: string, format: 'csv' | 'xlsx') =>
  download(`/api/closures/${closureId}/export/splices`, { format })
export const projectSplicesExport = (projectId: string, format: 'csv' | 'xlsx', day?: string) =>
  download(`/api/projects/${projectId}/export/splices`, { format, day })
export const boardExport = (projectId: string) => download(`/api/projects/${projectId}/export/board`)
/** The close-out PDF: for a signed-off closure the copy stored at sign-off, unless `fresh` asks for one rendered now. */
export const closeOutPdf = (closureId: string, fresh = false) =>
  download(`/api/closures/${closureId}/close-out`, fresh ? { fresh: '1' } : undefined)
export const sendProductionReport = (projectId: string, day: string) =>
  api('POST', `/api/projects/${projectId}/production-report`, {
    json: { day },
    schema: z.object({ sent: z.boolean(), recipients: z.number() }),
  })
