import { ApiError } from './errors'

let csrfToken = ''
let onUnauthenticated: (() => void) | null = null

/** The session store hands the CSRF token over after each session fetch or sign-in. */
export function setCsrfToken(token: string) { csrfToken = token }
/** The session's CSRF token, for the few requests that do not go through `api()` (uploads with progress). */
export function getCsrfToken() { return csrfToken }
export function setUnauthenticatedHandler(fn: () => void) { onUnauthenticated = fn }

type Query = Record<string, string | number | boolean | null | undefined | (string | number)[]>

/** Builds `?a=1&b=2&b=3` from an object (arrays repeat the key; empty values are left out). */
export function toQuery(q: Query = {}): string {
  const p = new URLSearchParams()
  for (const [k, v] of Object.entries(q)) {
    if (v === undefined || v === null || v === '') continue
    if (Array.isArray(v)) v.forEach((x) => p.append(k, String(x)))
    else p.append(k, String(v))
  }
  const s = p.toString()
  return s ? `?${s}` : ''
}

/** The only fetch wrapper: JSON in and out, cookies, the CSRF header, and the error envelope turned into ApiError. */
export async function api<T>(method: string, url: string, body?: unknown, opts: { query?: Query, raw?: boolean } = {}): Promise<T> {
  const headers: Record<string, string> = { Accept: 'application/json' }
  if (method !== 'GET') headers['X-CSRF-Token'] = csrfToken
  let payload: BodyInit | undefined
  if (body instanceof FormData) payload = body
  else if (body !== undefined) {
    headers['Content-Type'] = 'application/json'
    payload = JSON.stringify(body)
  }
  let res: Response
  try {
    res = await fetch(`/api${url}${toQuery(opts.query)}`, { method, headers, body: payload, credentials: 'same-origin' })
  } catch {
    throw new ApiError(0, 'NETWORK', 'The server cannot be reached; check the connection and try again')
  }
  if (res.status === 204) return undefined as T
  if (opts.raw && res.ok) return res as unknown as T
  const data = await res.json().catch(() => undefined)
  if (!res.ok) {
    const err = ApiError.fromBody(res.status, data)
    if (res.status === 401 && url !== '/session') onUnauthenticated?.()
    throw err
  }
  return data as T
}

export const http = {
  get: <T>(url: string, query?: Query) => api<T>('GET', url, undefined, { query }),
  post: <T>(url: string, body?: unknown) => api<T>('POST', url, body ?? {}),
  patch: <T>(url: string, body: unknown) => api<T>('PATCH', url, body),
  delete: <T>(url: string) => api<T>('DELETE', url),
}
