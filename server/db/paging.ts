import type { SelectQueryBuilder } from 'kysely'

/**
 * One page of a filtered query and the count of all its rows, read together. `rowsOf` adds the columns and the
 * order to the filtered query; pages count from 1.
 */
export async function pageWithTotal<DB, TB extends keyof DB, O>(
  filtered: SelectQueryBuilder<DB, TB, object>,
  page: { page: number; pageSize: number },
  rowsOf: (q: SelectQueryBuilder<DB, TB, object>) => SelectQueryBuilder<DB, TB, O>,
): Promise<{ rows: O[]; total: number }> {
  const [rows, count] = await Promise.all([
    rowsOf(filtered)
      .limit(page.pageSize)
      .offset((page.page - 1) * page.pageSize)
      .execute(),
    filtered
      .select((eb) => eb.fn.countAll<string>().as('n'))
      .$castTo<{ n: string }>()
      .executeTakeFirstOrThrow(),
  ])
  return { rows, total: Number(count.n) }
}
