import type { SelectQueryBuilder } from 'kysely'

/** Which rows of a list: a page by number (counting from 1) and size, or a limit and an offset. */
export type PageWindow = { page: number; pageSize: number } | { limit: number; offset: number }

/**
 * One page of a filtered query and the count of all its rows, read together. `rowsOf` adds the columns and the
 * order to the filtered query; the count reads the filtered query as it is (its joins and conditions).
 */
export async function pageWithTotal<DB, TB extends keyof DB, O>(
  filtered: SelectQueryBuilder<DB, TB, object>,
  page: PageWindow,
  rowsOf: (q: SelectQueryBuilder<DB, TB, object>) => SelectQueryBuilder<DB, TB, O>,
): Promise<{ rows: O[]; total: number }> {
  const { limit, offset } =
    'pageSize' in page ? { limit: page.pageSize, offset: (page.page - 1) * page.pageSize } : page
  const [rows, count] = await Promise.all([
    rowsOf(filtered).limit(limit).offset(offset).execute(),
    filtered
      .select((eb) => eb.fn.countAll<number>().as('n'))
      .$castTo<{ n: number }>()
      .executeTakeFirstOrThrow(),
  ])
  return { rows, total: Number(count.n) }
}
