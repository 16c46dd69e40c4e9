import { z } from 'zod'

/** A positive integer id, accepted from path or query strings too. */
export const IdSchema = z.coerce.number().int().positive()

/** A value that may arrive once or repeated in a query string (`siteId=1&siteId=2`). */
export function repeated<T extends z.ZodType>(item: T) {
  return z.preprocess((v) => (v === undefined ? undefined : Array.isArray(v) ? v : [v]), z.array(item).optional())
}

/** Paging and sorting common to every list endpoint. */
export const ListQuerySchema = z.object({
  page: z.coerce.number().int().min(1).default(1),
  pageSize: z.coerce.number().int().min(1).max(200).default(50),
  sort: z.string().max(200).optional(),
  q: z.string().trim().max(200).optional(),
})
export type ListQuery = z.infer<typeof ListQuerySchema>

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
