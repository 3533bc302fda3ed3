import { AppError } from '../errors'

/** Puts the parent id from the URL into a create body; a body naming another parent is refused, not overridden. */
export function withParent<K extends string>(body: unknown, key: K, value: string): Record<string, unknown> {
  if (body === null || typeof body !== 'object' || Array.isArray(body)) {
    throw new AppError('invalid_input', 'The request body must be a JSON object.', 400)
  }
  const given = (body as Record<string, unknown>)[key]
  if (given !== undefined && given !== value) {
    throw new AppError('invalid_input', `The body's ${key} does not match the address.`, 400, [
      { path: key, message: 'Leave it out or give the same id as in the address.' },
    ])
  }
  return { ...(body as Record<string, unknown>), [key]: value }
}

/** An id from the address that is not a UUID names nothing: 404 without touching the database. */
export function isUuid(value: unknown): value is string {
  return (
    typeof value === 'string' && /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i.test(value)
  )
}
