/**
 * The answer of a workflow rule book to "may this actor do this action on this record now?"
 * (docs/architecture.md#rule-books). `reason` is a sentence for the user and is present whenever `allowed` is false.
 * `status` tells the server which HTTP answer a refusal maps to: 403 when the actor's role or separation of duties
 * forbids it, 409 when the record's state or the clock does.
 */
export type Verdict = { allowed: true } | { allowed: false; status: 403 | 409 | 422; reason: string }

export const allow: Verdict = { allowed: true }
export const forbid = (reason: string): Verdict => ({ allowed: false, status: 403, reason })
export const blocked = (reason: string): Verdict => ({ allowed: false, status: 409, reason })
export const invalid = (reason: string): Verdict => ({ allowed: false, status: 422, reason })

/** A rule book's answer for every action of a workflow, keyed by action name. */
export type Verdicts<A extends string> = Record<A, Verdict>

/** The first refusal of several checks, or allow. */
export function firstRefusal(...checks: (() => Verdict)[]): Verdict {
  for (const check of checks) {
    const v = check()
    if (!v.allowed) return v
  }
  return allow
}
