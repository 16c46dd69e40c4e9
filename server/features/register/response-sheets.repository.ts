import { ALARM_SETTING_COLUMNS, limitsWithPlace } from './limits.repository.ts'
import type { Kysely, Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'

type Q = Kysely<Database> | Transaction<Database>

/** What an alarm response sheet prints of a limit. */
export async function findResponseSheetRows(db: Q, where: { limitId: number } | { siteId: number; areaId?: number }) {
  let q = limitsWithPlace(db).select([
    'limit_function.id',
    'limit_function.site_id',
    'limit_function.tag',
    'limit_function.description',
    'limit_function.direction',
    'limit_function.limit_class',
    'limit_function.status',
    'limit_function.revision',
    ...ALARM_SETTING_COLUMNS,
    'limit_function.priority',
    'limit_function.severity',
    'limit_function.consequence',
    'limit_function.operator_response',
    'limit_function.response_time_min',
    'limit_function.alarm_type',
    'limit_function.causes',
    'limit_function.confirmation',
    'limit_function.impact_category',
    'limit_function.safety_related_alarm',
    'limit_function.claimed_risk_reduction',
    'process.name as process_name',
    'area.name as area_name',
    'site.name as site_name',
    'site.code as site_code',
    'site.time_zone',
    'pi.tag as instrument_tag',
    'pi.unit',
  ])
  if ('limitId' in where) q = q.where('limit_function.id', '=', where.limitId)
  else {
    q = q
      .where('limit_function.site_id', '=', where.siteId)
      .where('limit_function.status', '=', 'active')
      .where('limit_function.limit_class', 'in', ['alarm', 'alert'])
    if (where.areaId !== undefined) q = q.where('limit_function.area_id', '=', where.areaId)
  }
  return q.orderBy('area.name').orderBy('process.name').orderBy('limit_function.tag').execute()
}

export type ResponseSheetRow = Awaited<ReturnType<typeof findResponseSheetRows>>[number]

/** The site of an area, to check the caller may read it. */
export function findAreaSite(db: Q, areaId: number) {
  return db.selectFrom('area').select(['id', 'site_id', 'name']).where('id', '=', areaId).executeTakeFirst()
}
