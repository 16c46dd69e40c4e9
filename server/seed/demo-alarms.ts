// Demo alarm journal: 60 invented days for both demo sites, bulk-inserted, with one alarm flood, a chattering alarm,
// a stale (and standing) alarm, a shelved alarm with its record, a shelve event without one (a finding) and an
// alarm shelved past its time. Tags are the demo register's own limits plus two the register does not know.
// Invented plant, invented events (docs/alarms.md).
import { sql } from 'kysely'
import { EVENT_CODE, JOURNAL_PRIORITIES } from '../../shared/domain/alarm-figures.ts'
import type { Clock } from '../clock.ts'
import type { Db } from '../db/index.ts'

const DAY = 86_400_000
const MIN = 60_000

/** A small deterministic generator (mulberry32), so every fresh demo plant gets the same journal. */
function random(seed: number) {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

interface Ev {
  t: number
  tag: string
  kind: number
  priority: number
  position: string
}

export async function seedDemoAlarms(db: Db, clock: Clock): Promise<void> {
  const now = clock.now().getTime()
  const start = now - 60 * DAY
  const sites = await db.selectFrom('site').select(['id', 'code']).orderBy('id').execute()
  const users = await db.selectFrom('app_user').select(['id', 'email']).execute()
  const userId = (who: string) => users.find((u) => u.email === `${who}@fernhollow.example`)!.id
  await sql`SELECT alarm_event_ensure_partitions(${new Date(start - DAY)}, ${new Date(now + DAY)})`.execute(db)

  for (const [n, site] of sites.entries()) {
    const rnd = random(1000 + n)
    const limits = await db
      .selectFrom('limit_function')
      .select(['id', 'tag', 'priority'])
      .where('site_id', '=', site.id)
      .orderBy('tag')
      .execute()
    if (!limits.length) continue
    const positions = n === 0 ? ['CON-1', 'CON-2'] : ['CON-A']
    const prio = (p: string | null) => Math.max(0, JOURNAL_PRIORITIES.indexOf((p ?? 'low') as 'low'))
    const tags = limits.map((l) => ({ tag: l.tag, priority: prio(l.priority) }))
    tags.push({ tag: `${site.code}-XA-901`, priority: 0 }, { tag: `${site.code}-XA-902`, priority: 1 })
    const posOf = (i: number) => positions[i % positions.length]
    const events: Ev[] = []
    const activation = (t: number, i: number, durationMs: number) => {
      const { tag, priority } = tags[i]
      const position = posOf(i)
      events.push({ t, tag, kind: EVENT_CODE.active, priority, position })
      if (durationMs < 60 * DAY) {
        events.push({
          t: t + Math.min(durationMs, 20_000 + rnd() * 40_000),
          tag,
          kind: EVENT_CODE.acknowledged,
          priority,
          position,
        })
        events.push({ t: t + durationMs, tag, kind: EVENT_CODE.return, priority, position })
      }
    }
    const staleIdx = 9 % tags.length
    // background: about 70 annunciations a day per site; a few tags far more often (the bad actors)
    for (let d = 0; d < 60; d++) {
      for (let k = 0; k < 70; k++) {
        const i = rnd() < 0.45 ? Math.floor(rnd() * 5) : Math.floor(rnd() * tags.length)
        if (i === staleIdx) continue
        activation(start + d * DAY + rnd() * DAY, i, (0.5 + rnd() * 30) * MIN)
      }
    }
    // one flood: 90 annunciations in 30 minutes on the first position, 12 days ago
    const flood = start + 48 * DAY + 14 * 60 * MIN
    for (let k = 0; k < 90; k++) activation(flood + k * 20_000, 2 * Math.floor(rnd() * 6), 5 * MIN + rnd() * 10 * MIN)
    // a chattering alarm: bursts of 4 activations 15 s apart, twice a day for the last 20 days
    const chatter = 7 % tags.length
    for (let d = 40; d < 60; d++)
      for (const h of [9, 16])
        for (let k = 0; k < 4; k++) activation(start + d * DAY + h * 60 * MIN + k * 15_000, chatter, 6_000)
    // a stale alarm: active for the last 5 days without returning (also standing now)
    activation(now - 5 * DAY, staleIdx, 61 * DAY)
    // a shelved alarm with its record, and a shelve event with none (a finding)
    const shelvedIdx = 11 % tags.length
    const shelvedAt = now - 2 * 60 * MIN
    events.push({
      t: shelvedAt,
      tag: tags[shelvedIdx].tag,
      kind: EVENT_CODE.shelved,
      priority: 0,
      position: posOf(shelvedIdx),
    })
    const unrecorded = 13 % tags.length
    events.push({
      t: now - 3 * DAY,
      tag: tags[unrecorded].tag,
      kind: EVENT_CODE.shelved,
      priority: 0,
      position: posOf(unrecorded),
    })
    events.push({
      t: now - 3 * DAY + 90 * MIN,
      tag: tags[unrecorded].tag,
      kind: EVENT_CODE.unshelved,
      priority: 0,
      position: posOf(unrecorded),
    })
    events.sort((a, b) => a.t - b.t)

    const upload = await db
      .insertInto('alarm_journal_upload')
      .values({
        site_id: site.id,
        created_by: userId('engineer'),
        file_name: `demo-journal-${site.code}.csv`,
        file_kind: 'csv',
        time_zone: 'UTC',
        mapping: '{}',
        status: 'done',
        rows_read: events.length,
        rows_stored: events.length,
        first_at: new Date(events[0].t),
        last_at: new Date(events[events.length - 1].t),
        created_at: new Date(now),
        finished_at: new Date(now),
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await sql`
      INSERT INTO alarm_event (site_id, occurred_at, tag, kind, priority, position, message, limit_id, upload_id, row_hash)
      SELECT ${site.id}, e.t, e.tag, e.kind, e.priority, e.position, '', l.id, ${upload.id},
        md5(lower(e.tag) || '|' || e.kind || '|' || e.priority || '|' || e.position || '|')::uuid
      FROM unnest(${events.map((e) => new Date(Math.round(e.t)))}::timestamptz[], ${events.map((e) => e.tag)}::text[],
        ${events.map((e) => e.kind)}::smallint[], ${events.map((e) => e.priority)}::smallint[],
        ${events.map((e) => e.position)}::text[]) AS e(t, tag, kind, priority, position)
      LEFT JOIN limit_function l ON l.site_id = ${site.id} AND lower(l.tag) = lower(e.tag)
      ON CONFLICT DO NOTHING`.execute(db)

    // the shelving record of the shelved alarm, and one shelving past its time (shown on the handover and home)
    const shelved = limits.find((l) => l.tag === tags[shelvedIdx].tag)
    await db
      .insertInto('alarm_state')
      .values([
        {
          site_id: site.id,
          limit_id: shelved?.id ?? null,
          tag: tags[shelvedIdx].tag,
          kind: 'shelved',
          reason: 'Transmitter being recalibrated by instrument crew; field reading taken every 30 min',
          started_by: userId('operator'),
          started_at: new Date(shelvedAt),
          until: new Date(shelvedAt + 4 * 60 * MIN),
        },
        {
          site_id: site.id,
          limit_id: null,
          tag: tags[tags.length - 1].tag,
          kind: 'shelved',
          reason: 'Nuisance alarm during start-up of the feed pump',
          started_by: userId('operator'),
          started_at: new Date(now - 10 * 60 * MIN),
          until: new Date(now - 2 * 60 * MIN),
        },
      ])
      .execute()
  }
}
