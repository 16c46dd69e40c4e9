import { ApiError } from './errors'

const NETWORK_MESSAGE = 'The server cannot be reached; check the connection and try again'

let csrfToken = ''
let onUnauthenticated: (() => void) | null = null

/** The session store hands the CSRF token over after each session fetch or sign-in. */
export function setCsrfToken(token: string) {
  csrfToken = token
}
export function setUnauthenticatedHandler(fn: () => void) {
  onUnauthenticated = fn
}

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

/**
 * GET answers asked for before the code that reads them has loaded: on first load the router asks for the page's
 * main data while the page's code loads, and waits for it (docs/architecture.md#first-load). The answer is kept read
 * (status and JSON body), so that the first `api()` GET of the same address within ten seconds takes it without
 * waiting on the network again; an answer nobody takes is dropped.
 */
interface Answer {
  status: number
  data: unknown
}
const early = new Map<string, { answer: Promise<Answer | null>; until: number }>()
const EARLY_MS = 10_000

/** Reads an answer's status and JSON body (none for 204, undefined when the body is no JSON). */
async function readAnswer(res: Response): Promise<Answer> {
  return { status: res.status, data: res.status === 204 ? undefined : await res.json().catch(() => undefined) }
}

/** Asks for a GET answer ahead of `api()`; resolves once it is read (never rejects: a failure is asked again). */
export function prefetchGet(url: string, query?: Query): Promise<void> {
  const now = Date.now()
  for (const [address, e] of early) if (e.until < now) early.delete(address)
  const address = `/api${url}${toQuery(query)}`
  const answer = fetch(address, { headers: { Accept: 'application/json' }, credentials: 'same-origin' }).then(
    readAnswer,
    () => null, // a failed early request is asked again by api(), not reported twice
  )
  early.set(address, { answer, until: now + EARLY_MS })
  return answer.then(() => undefined)
}

function takeEarly(address: string): Promise<Answer | null> | null {
  const e = early.get(address)
  if (!e) return null
  early.delete(address)
  return e.until >= Date.now() ? e.answer : null
}

/** The only fetch wrapper: JSON in and out, cookies, the CSRF header, and the error envelope turned into ApiError. */
export async function api<T>(
  method: string,
  url: string,
  body?: unknown,
  opts: { query?: Query; raw?: boolean } = {},
): Promise<T> {
  const headers: Record<string, string> = { Accept: 'application/json' }
  if (method !== 'GET') headers['X-CSRF-Token'] = csrfToken
  let payload: BodyInit | undefined
  if (body instanceof FormData) payload = body
  else if (body !== undefined) {
    headers['Content-Type'] = 'application/json'
    payload = JSON.stringify(body)
  }
  const address = `/api${url}${toQuery(opts.query)}`
  const asked = method === 'GET' && !opts.raw ? takeEarly(address) : null
  let answer = asked ? await asked : null
  if (!answer) {
    let res: Response
    try {
      res = await fetch(address, { method, headers, body: payload, credentials: 'same-origin' })
    } catch {
      throw new ApiError(0, 'NETWORK', NETWORK_MESSAGE)
    }
    if (res.status === 204) return undefined as T
    if (opts.raw && res.ok) return res as unknown as T
    answer = await readAnswer(res)
  }
  const { status, data } = answer
  if (status === 204) return undefined as T
  if (status < 200 || status > 299) {
    const err = ApiError.fromBody(status, data)
    if (status === 401 && url !== '/session') onUnauthenticated?.()
    throw err
  }
  return data as T
}

/**
 * POSTs a form and reports the upload's progress (0…1): fetch reports no upload progress, so this one request goes
 * through XMLHttpRequest, with the CSRF header; error answers become ApiError as in `api()`.
 */
export function uploadWithProgress<T>(
  url: string,
  formData: FormData,
  onProgress: (fraction: number) => void,
  networkMessage = NETWORK_MESSAGE,
): Promise<T> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest()
    xhr.open('POST', `/api${url}`)
    xhr.setRequestHeader('X-CSRF-Token', csrfToken)
    xhr.setRequestHeader('Accept', 'application/json')
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) onProgress(e.loaded / e.total)
    }
    xhr.onerror = () => reject(new ApiError(0, 'NETWORK', networkMessage))
    xhr.onload = () => {
      let body: unknown
      try {
        body = JSON.parse(xhr.responseText)
      } catch {
        body = undefined
      }
      if (xhr.status >= 200 && xhr.status < 300) resolve(body as T)
      else reject(ApiError.fromBody(xhr.status, body))
    }
    xhr.send(formData)
  })
}

export const http = {
  get: <T>(url: string, query?: Query) => api<T>('GET', url, undefined, { query }),
  post: <T>(url: string, body?: unknown) => api<T>('POST', url, body ?? {}),
  patch: <T>(url: string, body: unknown) => api<T>('PATCH', url, body),
  put: <T>(url: string, body: unknown) => api<T>('PUT', url, body),
  delete: <T>(url: string) => api<T>('DELETE', url),
}

/** Address of one of a record's attachments (a download: GET `<record>/attachments/<id>`). */
export const attachmentUrlOf = (record: string, attachmentId: number) => `/api${record}/attachments/${attachmentId}`

/** Uploads a record's attachment (POST `<record>/attachments`, the file as `file`) and reports its progress (0…1). */
export function uploadAttachmentOf(record: string, file: File, onProgress: (fraction: number) => void) {
  const form = new FormData()
  form.append('file', file)
  return uploadWithProgress<{ id: number; fileName: string }>(`${record}/attachments`, form, onProgress)
}
