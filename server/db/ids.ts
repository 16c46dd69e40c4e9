/**
 * A list of ids for `IN (…)`: PostgreSQL refuses an empty `IN ()`, so an empty list becomes `[-1]`, an id no row
 * has, and the condition matches nothing.
 */
export function idsOrNone(ids: readonly number[]): readonly number[] {
  return ids.length ? ids : [-1]
}
