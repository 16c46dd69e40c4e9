/**
 * A long list cut into lists of at most `size` items, in order: one statement a batch keeps each statement below
 * PostgreSQL's limit of 65,535 bind parameters.
 */
export function batchesOf<T>(items: readonly T[], size: number): T[][] {
  const batches: T[][] = []
  for (let i = 0; i < items.length; i += size) batches.push(items.slice(i, i + size))
  return batches
}
