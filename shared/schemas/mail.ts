import { z } from 'zod'
import { idSchema, labelSchema } from './common'
import { roleSchema } from './enums'
import { emailSchema, passwordSchema } from './user'

/** A new user invited by e-mail: they choose their own password from the link. */
export const invitationCreateSchema = z
  .object({
    id: idSchema,
    email: emailSchema,
    name: labelSchema,
    role: roleSchema,
    crewId: idSchema.nullable().default(null),
  })
  .strict()
export type InvitationCreate = z.infer<typeof invitationCreateSchema>

/** The secret from an invitation or reset link, with the password the user chose. */
export const tokenPasswordSchema = z
  .object({
    token: z.string().regex(/^[A-Za-z0-9_-]{32,128}$/, 'Not a link token.'),
    password: passwordSchema,
  })
  .strict()
export type TokenPassword = z.infer<typeof tokenPasswordSchema>

export const passwordResetRequestSchema = z.object({ email: emailSchema }).strict()

/** Sends the production report of one UTC day now. */
export const productionReportRequestSchema = z.object({ day: z.iso.date() }).strict()

export const mailSummarySchema = z.object({
  id: z.string(),
  from: z.string(),
  to: z.string(),
  subject: z.string(),
  date: z.string(),
  attachments: z.number().int(),
})
export type MailSummary = z.infer<typeof mailSummarySchema>

export const mailPageSchema = z.object({ items: z.array(mailSummarySchema), total: z.number().int() })

export const mailMessageSchema = mailSummarySchema.extend({
  text: z.string(),
  attachmentList: z.array(
    z.object({
      index: z.number().int(),
      filename: z.string(),
      contentType: z.string(),
      size: z.number().int(),
    }),
  ),
})
export type MailMessage = z.infer<typeof mailMessageSchema>
