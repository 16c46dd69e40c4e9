import { ALARM_SETTING_COLUMNS } from './limits.repository.ts'
import type { Kysely, Transaction } from 'kysely'
import type { Database } from '../../db/schema.ts'

type Q = Kysely<Database> | Transaction<Database>

/** What an alarm response sheet prints of a limit. */
export async function findResponseSheetRows(db: Q, where: { limitId: number } | { siteId: number; areaId?: number }) {
  let q = db
    .selectFrom('limit_function as l')
    .innerJoin('process', 'process.id', 'l.process_id')
    .innerJoin('area', 'area.id', 'l.area_id')
    .innerJoin('site', 'site.id', 'l.site_id')
    .innerJoin('instrument as pi', 'pi.id', 'l.primary_instrument_id')
    .select([
      'l.id',
      'l.site_id',
      'l.tag',
      'l.description',
      'l.direction',
      'l.limit_class',
      'l.status',
      'l.revision',
      ...ALARM_SETTING_COLUMNS,
      'l.priority',
      'l.severity',
      'l.consequence',
      'l.operator_response',
      'l.response_time_min',
      'l.alarm_type',
      'l.causes',
      'l.confirmation',
      'l.impact_category',
      'l.safety_related_alarm',
      'l.claimed_risk_reduction',
      'process.name as process_name',
      'area.name as area_name',
      'site.name as site_name',
      'site.code as site_code',
      'site.time_zone',
      'pi.tag as instrument_tag',
      'pi.unit',
    ])
  if ('limitId' in where) q = q.where('l.id', '=', where.limitId)
  else {
    q = q
      .where('l.site_id', '=', where.siteId)
      .where('l.status', '=', 'active')
      .where('l.limit_class', 'in', ['alarm', 'alert'])
    if (where.areaId !== undefined) q = q.where('l.area_id', '=', where.areaId)
  }
  return q.orderBy('area.name').orderBy('process.name').orderBy('l.tag').execute()
}

export type ResponseSheetRow = Awaited<ReturnType<typeof findResponseSheetRows>>[number]

/** The site of an area, to check the caller may read it. */
export function findAreaSite(db: Q, areaId: number) {
  return db.selectFrom('area').select(['id', 'site_id', 'name']).where('id', '=', areaId).executeTakeFirst()
}
