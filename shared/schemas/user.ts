import { z } from 'zod'
import { emptyUpdateMessage, hasSomeField, idSchema, labelSchema } from './common'
import { roleSchema } from './enums'

// Addresses are compared lower-cased and trimmed, so one person cannot hold two accounts by case.
export const emailSchema = z.string().trim().toLowerCase().pipe(z.email().max(254))

/** A new password: long rather than complex. */
export const passwordSchema = z.string().min(12).max(200)

const userFields = {
  id: idSchema,
  email: emailSchema,
  name: labelSchema,
  role: roleSchema,
  crewId: idSchema.nullable(),
  active: z.boolean(),
}

export const userSchema = z.object(userFields)
export type User = z.infer<typeof userSchema>

export const userCreateSchema = z
  .object({
    ...userFields,
    crewId: userFields.crewId.default(null),
    active: userFields.active.default(true),
    password: passwordSchema,
  })
  .strict()
export type UserCreate = z.infer<typeof userCreateSchema>

export const userUpdateSchema = z
  .object({ ...userFields, password: passwordSchema })
  .omit({ id: true })
  .partial()
  .strict()
  .refine(hasSomeField, emptyUpdateMessage)
export type UserUpdate = z.infer<typeof userUpdateSchema>

export const crewSchema = z.object({ id: idSchema, name: labelSchema })
export type Crew = z.infer<typeof crewSchema>

export const crewCreateSchema = crewSchema.strict()
export type CrewCreate = z.infer<typeof crewCreateSchema>

export const crewUpdateSchema = crewSchema.pick({ name: true }).strict()
export type CrewUpdate = z.infer<typeof crewUpdateSchema>

// No length rule at sign-in: the answer must not reveal the password policy or whether the account exists.
export const signInSchema = z.object({ email: emailSchema, password: z.string().min(1).max(200) }).strict()
export type SignIn = z.infer<typeof signInSchema>
