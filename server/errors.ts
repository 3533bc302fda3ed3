/** An expected failure with its HTTP status; the error handler turns it into the one error body. */
export class AppError extends Error {
  constructor(
    readonly code: string,
    message: string,
    readonly status = 400,
    readonly details?: unknown,
    readonly headers?: Record<string, string>,
  ) {
    super(message)
    this.name = 'AppError'
  }
}

export const notFound = (what: string) => new AppError('not_found', `${what} was not found.`, 404)
export const forbidden = (message = 'Your role may not do this.') => new AppError('forbidden', message, 403)
export const unauthorized = (message = 'Sign in to continue.') => new AppError('unauthorized', message, 401)
