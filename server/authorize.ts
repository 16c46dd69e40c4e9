import { ForbiddenError, subject } from '@casl/ability'
import type { Action, AppAbility, SubjectName } from '../shared/abilities/index.ts'
import { notFound } from './errors.ts'

/** Throws CASL's ForbiddenError (→ 403) unless the ability allows `action` on the subject (with its fields). */
export function authorize(
  ability: AppAbility,
  action: Action,
  name: Exclude<SubjectName, 'all'>,
  obj?: Record<string, unknown>,
) {
  if (obj) ForbiddenError.from(ability).throwUnlessCan(action, subject(name, { ...obj }) as never)
  else ForbiddenError.from(ability).throwUnlessCan(action, name)
}

/** Whether the ability allows it (no throw). */
export function allows(
  ability: AppAbility,
  action: Action,
  name: Exclude<SubjectName, 'all'>,
  obj?: Record<string, unknown>,
): boolean {
  return obj ? ability.can(action, subject(name, { ...obj }) as never) : ability.can(action, name)
}

/**
 * Throws 404, exactly as for an id that does not exist, unless the user may read the record: an id of another site's
 * record answers like a missing one, so ids tell nothing about what exists elsewhere (docs/security.md#authorization).
 * Called where a service loads the record, before any other check on it.
 */
export function ensureVisible(
  ability: AppAbility,
  name: Exclude<SubjectName, 'all'>,
  obj: Record<string, unknown>,
  what: string,
): void {
  if (!allows(ability, 'read', name, obj)) throw notFound(what)
}

/**
 * A record loaded by its id (a row with its `site_id`, or the record as the API answers it, with its `siteId`), as the
 * user may read it: 404 when it is missing or at another site (`what` names it in the message; the subject's name by
 * default), see ensureVisible.
 */
export function readableRow<R extends { site_id: number } | { siteId: number }>(
  row: R | null | undefined,
  ability: AppAbility,
  name: Exclude<SubjectName, 'all'>,
  what: string = name,
): R {
  if (!row) throw notFound(what)
  ensureVisible(ability, name, { siteId: 'siteId' in row ? row.siteId : row.site_id }, what)
  return row
}

/**
 * A record as the user may read it (404 otherwise, see readableRow) and may `action` at its site (403 otherwise):
 * the guard of a service that changes or acts on one record.
 */
export function allowedRow<R extends { site_id: number }>(
  row: R | null | undefined,
  ability: AppAbility,
  action: Action,
  name: Exclude<SubjectName, 'all'>,
  what: string = name,
): R {
  const r = readableRow(row, ability, name, what)
  authorize(ability, action, name, { siteId: r.site_id })
  return r
}

/** Every site where the user holds any role (what they may read). */
export function userSiteIds(user: { roles: { siteId: number }[] } | null): number[] {
  return [...new Set((user?.roles ?? []).map((r) => r.siteId))]
}

/** The requested sites narrowed to the user's sites (all of theirs when none requested). */
export function scopeSites(user: { roles: { siteId: number }[] } | null, requested?: number[]): number[] {
  const mine = userSiteIds(user)
  return requested?.length ? requested.filter((s) => mine.includes(s)) : mine
}

/**
 * Escapes the LIKE wildcards of user text, so a search for "10%" finds "10%"
 * (PostgreSQL's default escape is a backslash).
 */
export function likeEscape(text: string): string {
  return text.replace(/[\\%_]/g, (c) => `\\${c}`)
}
