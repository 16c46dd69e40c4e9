import type { AppAbility } from '../../../shared/abilities/index.ts'
import { authorize, readableRow } from '../../authorize.ts'
import type { AppDeps } from '../../deps.ts'
import { invalidState, notFound } from '../../errors.ts'
import { responseSheetsPdf } from './response-sheets.pdf.ts'
import { findAreaSite, findResponseSheetRows } from './response-sheets.repository.ts'

/** The response sheet of one alarm or alert (a trip has none: it acts by itself). */
export async function responseSheet(deps: AppDeps, ability: AppAbility, limitId: number) {
  const [found] = await findResponseSheetRows(deps.db, { limitId })
  const row = readableRow(found, ability, 'Limit')
  if (row.limit_class === 'trip') throw invalidState('A trip acts by itself and has no alarm response sheet')
  return { pdf: await responseSheetsPdf([row], `Alarm response sheet ${row.tag}`, deps.clock.now()), tag: row.tag }
}

/** The booklet of a site's (or one area's) active alarms and alerts, one page each. */
export async function responseBooklet(deps: AppDeps, ability: AppAbility, q: { siteId: number; areaId?: number }) {
  if (q.areaId !== undefined) {
    const area = await findAreaSite(deps.db, q.areaId)
    if (!area || area.site_id !== q.siteId) throw notFound('Area')
  }
  authorize(ability, 'read', 'Limit', { siteId: q.siteId })
  const rows = await findResponseSheetRows(deps.db, q)
  if (rows.length === 0) throw notFound('An active alarm or alert in this area')
  const where = q.areaId !== undefined ? `${rows[0].site_code} ${rows[0].area_name}` : rows[0].site_code
  return { pdf: await responseSheetsPdf(rows, `Alarm response sheets ${where}`, deps.clock.now()), where }
}
