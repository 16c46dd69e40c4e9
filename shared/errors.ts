/** Error codes shared by server and client (the `code` of the API error envelope). */
export const ErrorCode = {
  VALIDATION_FAILED: 'VALIDATION_FAILED',
  UNAUTHENTICATED: 'UNAUTHENTICATED',
  INVALID_CREDENTIALS: 'INVALID_CREDENTIALS',
  RATE_LIMITED: 'RATE_LIMITED',
  CSRF_INVALID: 'CSRF_INVALID',
  FORBIDDEN: 'FORBIDDEN',
  NOT_FOUND: 'NOT_FOUND',
  CONFLICT: 'CONFLICT',
  INVALID_STATE: 'INVALID_STATE',
  SIGNATURE_INVALID: 'SIGNATURE_INVALID',
  UNPROCESSABLE: 'UNPROCESSABLE',
  SESSION_EXPIRED: 'SESSION_EXPIRED',
  SERVICE_UNAVAILABLE: 'SERVICE_UNAVAILABLE',
  INTERNAL: 'INTERNAL',
} as const

export type ErrorCode = (typeof ErrorCode)[keyof typeof ErrorCode]

/** The JSON body of every error answer. */
export interface ApiErrorBody {
  error: { code: ErrorCode; message: string; details?: { fields?: Record<string, string[]> } & Record<string, unknown> }
}
