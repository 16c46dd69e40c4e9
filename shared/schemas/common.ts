import { z } from 'zod'

/** The largest id PostgreSQL's integer columns hold (2^31 - 1); every id of the API fits an int4. */
export const MAX_ID = 2_147_483_647

/** A positive integer id within PostgreSQL's integer range, accepted from path or query strings too. */
export const IdSchema = z.coerce.number().int().positive().max(MAX_ID, 'No such id')

/** How deep a JSON body may nest (objects and arrays); the deepest record of the API needs fewer than 10 levels. */
export const MAX_INPUT_DEPTH = 32

// a high surrogate not followed by a low one, or a low surrogate not preceded by a high one
const LONE_SURROGATE = /[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/

/**
 * Why a text cannot be stored, or null: PostgreSQL's text and jsonb refuse the NUL character, and a lone UTF-16
 * surrogate is not a Unicode character at all (it cannot be encoded in UTF-8).
 */
export function textProblem(s: string): string | null {
  if (s.includes('\u0000')) return 'Text must not contain the NUL character'
  if (LONE_SURROGATE.test(s)) return 'Text must not contain an unpaired surrogate (not a valid Unicode character)'
  return null
}

/** Any text the API accepts: no NUL, no lone surrogate. Build field schemas from this one. */
export const TextSchema = z.string().superRefine((s, ctx) => {
  const problem = textProblem(s)
  if (problem) ctx.addIssue({ code: 'custom', message: problem })
})

/**
 * Walks a decoded request value (body, query, path) without recursion and answers the first problem as
 * `{ path, message }`: text that cannot be stored (textProblem), an object key included, or nesting deeper than
 * maxDepth. The server applies it to every request before any router (server/middleware/input-guard.ts).
 */
export function inputProblem(value: unknown, maxDepth = MAX_INPUT_DEPTH): { path: string; message: string } | null {
  const stack: { v: unknown; path: string; depth: number }[] = [{ v: value, path: '', depth: 0 }]
  while (stack.length) {
    const { v, path, depth } = stack.pop()!
    if (typeof v === 'string') {
      const problem = textProblem(v)
      if (problem) return { path: path || '_', message: problem }
    } else if (v && typeof v === 'object') {
      if (depth >= maxDepth) return { path: path || '_', message: `Nested deeper than ${maxDepth} levels` }
      for (const [k, child] of Object.entries(v)) {
        const problem = textProblem(k)
        if (problem) return { path: path || '_', message: problem }
        stack.push({ v: child, path: path ? `${path}.${k}` : k, depth: depth + 1 })
      }
    }
  }
  return null
}

/** A value that may arrive once or repeated in a query string (`siteId=1&siteId=2`). */
export function repeated<T extends z.ZodType>(item: T) {
  return z.preprocess((v) => (v === undefined ? undefined : Array.isArray(v) ? v : [v]), z.array(item).optional())
}

/** The path parameters of a route under a record (`/api/limits/:id/...`). */
export const IdParamsSchema = z.object({ id: IdSchema })

/** A query narrowed only to some of the user's sites (`siteId=1&siteId=2`; none: all of them). */
export const SiteFilterQuerySchema = z.object({ siteId: repeated(IdSchema) })
export type SiteFilterQuery = z.infer<typeof SiteFilterQuerySchema>

/** An instant as ISO 8601 text with its offset (`2026-12-03T07:15:00Z`). */
export const InstantSchema = z.iso.datetime({ offset: true })

/** A page size of at most 200 rows, `pageSize` when the query does not say. */
export const pageSizeOf = (pageSize: number) => z.coerce.number().int().min(1).max(200).default(pageSize)

/** Paging of every list endpoint: pages from 1, at most 200 rows a page, 50 unless asked. */
export const PageSchema = z.object({
  page: z.coerce.number().int().min(1).default(1),
  pageSize: pageSizeOf(50),
})

/** Paging, sorting and text search common to list endpoints. */
export const ListQuerySchema = PageSchema.extend({
  sort: z.string().max(200).optional(),
  q: z.string().trim().max(200).optional(),
})
export type ListQuery = z.infer<typeof ListQuerySchema>
/**
 * A list query as the client sends it: the parsed types, every field optional (the server fills the defaults).
 * `z.input` would type the coerced fields as `unknown`.
 */
export type ListQueryInput = Partial<ListQuery>

/** Every list answers `{ items, total }`. */
export interface ListResult<T> {
  items: T[]
  total: number
}

/** Parses `sort=-setpoint,tag` into fields and directions, keeping only allowed fields. */
export function parseSort(sort: string | undefined, allowed: readonly string[]): { field: string; desc: boolean }[] {
  if (!sort) return []
  return sort
    .split(',')
    .map((s) => s.trim())
    .filter(Boolean)
    .map((s) => ({ field: s.replace(/^-/, ''), desc: s.startsWith('-') }))
    .filter((s) => allowed.includes(s.field))
}

/** A decimal number kept exactly as text (PostgreSQL numeric); accepts numbers or numeric strings. */
export const DecimalSchema = z
  .union([z.number(), z.string().trim()])
  .transform((v) => (typeof v === 'number' ? String(v) : v))
  .refine((v) => /^-?\d+(\.\d+)?([eE][-+]?\d+)?$/.test(v) && Number.isFinite(Number(v)), { message: 'Enter a number' })

/** A number typed as a number or a numeric string (no exponent), as a JS number. */
export const NumberInputSchema = z
  .union([
    z.number(),
    z
      .string()
      .trim()
      .regex(/^-?\d+(\.\d+)?$/, 'Enter a number'),
  ])
  .transform(Number)
  .refine(Number.isFinite, 'Enter a number')

/** An optional NumberInputSchema: missing, null and the empty string all mean null. */
export const OptionalNumberInputSchema = z
  .union([NumberInputSchema, z.null(), z.literal('').transform(() => null)])
  .optional()
  .transform((v) => v ?? null)

/** True when the runtime knows the IANA time zone name. */
export function isKnownTimeZone(tz: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: tz })
    return true
  } catch {
    return false
  }
}

/** A multipart form field holding JSON (form fields are strings); `message` says what the JSON must be. */
export const jsonFormField = (message: string) =>
  z
    .string()
    .max(50_000)
    .transform((s, ctx) => {
      try {
        return JSON.parse(s) as unknown
      } catch {
        ctx.addIssue({ code: 'custom', message })
        return z.NEVER
      }
    })

/** What the API says of every signature on a record: who signed, with what meaning, when, over which content. */
export interface SignatureBase {
  id: number
  userId: number
  name: string
  meaning: string
  at: string
  contentHash: string
}

/**
 * Parses a partial update and keeps only the keys the caller sent: zod applies `.default()` values even inside
 * `.partial()`, which would silently reset fields a PATCH did not mention.
 */
export function parsePatch<T extends z.ZodType>(schema: T, raw: unknown): Partial<z.output<T>> {
  const parsed = schema.parse(raw) as Record<string, unknown>
  const given = raw && typeof raw === 'object' ? Object.keys(raw) : []
  return Object.fromEntries(Object.entries(parsed).filter(([k]) => given.includes(k))) as Partial<z.output<T>>
}

/** The same as parsePatch, without throwing. */
export function safeParsePatch<T extends z.ZodType>(
  schema: T,
  raw: unknown,
): { success: true; data: Partial<z.output<T>> } | { success: false; error: z.ZodError } {
  const r = schema.safeParse(raw)
  if (!r.success) return { success: false, error: r.error }
  const given = raw && typeof raw === 'object' ? Object.keys(raw) : []
  return {
    success: true,
    data: Object.fromEntries(
      Object.entries(r.data as Record<string, unknown>).filter(([k]) => given.includes(k)),
    ) as Partial<z.output<T>>,
  }
}

/** A rule book's answer to one action, as the server sends it with a record (shared/domain/rules/verdict.ts). */
export const VerdictSchema = z.union([
  z.object({ allowed: z.literal(true) }),
  z.object({
    allowed: z.literal(false),
    status: z.union([z.literal(403), z.literal(409), z.literal(422)]),
    reason: z.string(),
  }),
])
