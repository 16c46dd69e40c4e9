import type { ApiErrorBody, ErrorCode } from '@shared/errors.ts'

/** An error answer of the API, with its code, message and field errors. */
export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: ErrorCode | 'NETWORK',
    message: string,
    readonly fields: Record<string, string[]> = {},
    readonly details: Record<string, unknown> = {},
  ) {
    super(message)
  }

  static fromBody(status: number, body: unknown): ApiError {
    const err = (body as ApiErrorBody | undefined)?.error
    if (!err) return new ApiError(status, 'INTERNAL', `The server answered ${status}`)
    return new ApiError(status, err.code, err.message, err.details?.fields ?? {}, err.details ?? {})
  }
}

export function isApiError(e: unknown): e is ApiError {
  return e instanceof ApiError
}

/** A readable sentence for any error. */
export function messageOf(e: unknown): string {
  if (isApiError(e)) return e.message
  return e instanceof Error ? e.message : 'Something went wrong'
}

/** The sentence to show for an error that may not have happened: '' while there is none. */
export function errorText(e: unknown): string {
  return e ? messageOf(e) : ''
}
