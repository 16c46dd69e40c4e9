import type { Kysely, Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'

// The tag lookup instruments and limits share: a tag is unique in its site, whatever its case (docs/register.md).

/** The id of the instrument or limit of the site with this tag (case-insensitive), other than `exceptId`. */
export function findIdByTag(
  db: Kysely<Database> | Transaction<Database>,
  table: 'instrument' | 'limit_function',
  siteId: number,
  tag: string,
  exceptId: number | null,
) {
  let q = db
    .selectFrom(table)
    .select('id')
    .where('site_id', '=', siteId)
    .where((eb) => eb(eb.fn('lower', ['tag']), '=', tag.toLowerCase()))
  if (exceptId) q = q.where('id', '!=', exceptId)
  return q.executeTakeFirst()
}
