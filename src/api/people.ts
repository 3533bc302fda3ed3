import { z } from 'zod'
import { crewSchema, mailMessageSchema, mailPageSchema, userSchema, type Role } from '#shared/schemas/index'
import { api } from './http'

const userPage = z.object({ items: z.array(userSchema), total: z.number().int() })
const crewPage = z.object({ items: z.array(crewSchema), total: z.number().int() })

export interface UserFilter {
  role?: Role | null
  crewId?: string | null
  active?: 'true' | 'false' | null
  q?: string | null
}

export const listUsers = (filter: UserFilter) =>
  api('GET', '/api/users', { query: { limit: 200, ...filter }, schema: userPage })
export const updateUser = (id: string, patch: Record<string, unknown>) =>
  api('PATCH', `/api/users/${id}`, { json: patch, schema: userSchema })
export const inviteUser = (body: {
  id: string
  email: string
  name: string
  role: Role
  crewId: string | null
}) =>
  api('POST', '/api/invitations', { json: body, schema: z.object({ user: userSchema, mailed: z.boolean() }) })
export const listCrews = () => api('GET', '/api/crews', { query: { limit: 200 }, schema: crewPage })
export const createCrew = (body: { id: string; name: string }) =>
  api('POST', '/api/crews', { json: body, schema: crewSchema })
export const renameCrew = (id: string, name: string) =>
  api('PATCH', `/api/crews/${id}`, { json: { name }, schema: crewSchema })

export const listMail = () => api('GET', '/api/mailbox', { schema: mailPageSchema })
export const readMail = (id: string) => api('GET', `/api/mailbox/${id}`, { schema: mailMessageSchema })
export const sendProductionReport = (projectId: string, day: string) =>
  api('POST', `/api/projects/${projectId}/production-report`, { json: { day } })
export const listProjects = () =>
  api('GET', '/api/projects', {
    query: { limit: 100 },
    schema: z.object({
      items: z.array(z.object({ id: z.string(), code: z.string(), name: z.string() }).loose()),
    }),
  })
export const usePasswordLink = (kind: 'invitation' | 'reset', token: string, password: string) =>
  api('POST', kind === 'invitation' ? '/api/auth/invitation/accept' : '/api/auth/password-reset/confirm', {
    json: { token, password },
  })
export const requestReset = (email: string) => api('POST', '/api/auth/password-reset', { json: { email } })
