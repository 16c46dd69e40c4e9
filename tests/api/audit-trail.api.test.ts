import type { Express } from 'express'
import pg from 'pg'
import Papa from 'papaparse'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { backfillAuditEventSites } from '../../migrations/2026_12_05_400000_audit_event_site.ts'
import { createApp } from '../../server/app.ts'
import { createDb } from '../../server/db/index.ts'
import { appendAudit, sealAll } from '../../server/features/audit/audit.repository.ts'
import { ApiAgent, signedIn, siteIdByCode } from './helpers/agent.ts'
import { useTestDb } from './helpers/test-db.ts'

// docs/security.md, "Whose events a reader sees": events carry their site; an auditor or plant manager reads the events
// of their sites and installation-wide events about their own sites' accounts; an administrator those of the sites
// they administer, and installation-wide events about no site's account.

const ctx = useTestDb()
let app: Express
let admin: ApiAgent
let fhr: number
let smp: number
const PASSWORD = 'quiet-harbour-lantern-meadow'
const ids: Record<string, number> = {}
const ev: Record<string, number> = {}

interface Item {
  id: number
  action: string
  entityType: string
  entityId: string | null
  entityTitle: string | null
  siteId: number | null
}

async function person(key: string, role: string, siteId: number) {
  const res = await admin
    .post('/api/users', {
      email: `${key}@fernhollow.example`,
      displayName: `Person ${key}`,
      password: PASSWORD,
      roles: [{ siteId, role }],
    })
    .expect(201)
  ids[key] = res.body.id
}

async function as(key: string) {
  const a = new ApiAgent(app)
  await a.signIn(`${key}@fernhollow.example`, PASSWORD)
  return a
}

/** Every event the agent may read (all pages). */
async function visible(a: ApiAgent, query = ''): Promise<Item[]> {
  const res = await a.get(`/api/audit-events?pageSize=200${query}`).expect(200)
  expect(res.body.items.length).toBe(res.body.total)
  return res.body.items
}

async function lastEvent(action: string, entityId?: string): Promise<number> {
  let q = ctx.db.selectFrom('audit_event').select('id').where('action', '=', action)
  if (entityId) q = q.where('entity_id', '=', entityId)
  return Number((await q.orderBy('id', 'desc').limit(1).executeTakeFirstOrThrow()).id)
}

beforeAll(async () => {
  app = createApp(ctx)
  admin = await signedIn(app, 'admin')
  fhr = await siteIdByCode(admin, 'FHR')
  smp = await siteIdByCode(admin, 'SMP')
  await person('aud-fhr', 'auditor', fhr)
  await person('mgr-fhr', 'plant_manager', fhr)
  await person('adm-fhr', 'admin', fhr)
  await person('op-fhr', 'operator', fhr)
  await person('op-smp', 'operator', smp)
  const areaF = await admin.created('/api/areas', { siteId: fhr, name: 'Audit scope unit F' })
  const areaS = await admin.created('/api/areas', { siteId: smp, name: 'Audit scope unit S' })
  ev.areaFhr = await lastEvent('area.create', String(areaF.id))
  ev.areaSmp = await lastEvent('area.create', String(areaS.id))
  await as('op-fhr')
  ev.signInFhr = await lastEvent('session.sign_in', String(ids['op-fhr']))
  await as('op-smp')
  ev.signInSmp = await lastEvent('session.sign_in', String(ids['op-smp']))
  const stranger = new ApiAgent(app)
  await stranger.refreshCsrf()
  await stranger.post('/api/session', { email: 'nobody@elsewhere.example', password: 'not-the-password' }).expect(401)
  ev.unknown = await lastEvent('session.sign_in_failed')
})

describe('events carry their site', () => {
  it("fills the entity's site, and null for installation-wide events", async () => {
    const site = async (id: number) =>
      (await ctx.db.selectFrom('audit_event').select('site_id').where('id', '=', id).executeTakeFirstOrThrow()).site_id
    expect(await site(ev.areaFhr)).toBe(fhr)
    expect(await site(ev.areaSmp)).toBe(smp)
    expect(await site(ev.signInFhr)).toBeNull()
    expect(await site(ev.unknown)).toBeNull()
    // a site's own creation event is about that site
    const created = await admin.created('/api/sites', {
      code: 'AUD',
      name: 'Audit Test Works',
      timeZone: 'Europe/London',
    })
    expect(await site(await lastEvent('site.create', String(created.id)))).toBe(created.id)
  })

  it('leaves no event about a site-bound record without its site in this whole file', async () => {
    // users, areas, sites, sign-ins and the demo seed were written above by the services themselves
    const siteless = await ctx.db
      .selectFrom('audit_event')
      .select(['id', 'action', 'entity_type'])
      .where('site_id', 'is', null)
      .where('entity_type', 'not in', ['User', 'System'])
      .where('action', 'not in', ['area.update', 'limit.delete'])
      .execute()
    expect(siteless).toEqual([])
    const typed = await ctx.db
      .selectFrom('audit_event')
      .select('entity_type')
      .distinct()
      .where('site_id', 'is not', null)
      .execute()
    expect(typed.map((t) => t.entity_type).sort()).toEqual(['Area', 'Site'])
  })

  it('keeps the chain verifiable with the site in the hashed content', async () => {
    // what the sealer job does a second after the writes (it does not run in this file's app)
    await sealAll(ctx.db, ctx.clock)
    const res = await (await as('aud-fhr')).post('/api/audit-events/verify').expect(200)
    expect(res.body).toMatchObject({ ok: true, badId: null, problem: null })
    expect(res.body.checked).toBeGreaterThan(10)
  })
})

describe('who reads which events', () => {
  const cases: [
    who: string,
    fhrEvent: boolean,
    smpEvent: boolean,
    fhrUser: boolean,
    smpUser: boolean,
    noOne: boolean,
  ][] = [
    // who        own site  other site  own site's user  other site's user  about no site's user
    ['aud-fhr', true, false, true, false, false],
    ['mgr-fhr', true, false, true, false, false],
    ['adm-fhr', true, false, true, false, true],
    ['auditor', true, true, true, true, false],
    ['admin', true, true, true, true, true],
  ]
  it.each(cases)('%s', async (who, fhrEvent, smpEvent, fhrUser, smpUser, noOne) => {
    const a = who.includes('-') ? await as(who) : await signedIn(app, who)
    const seen = new Set((await visible(a, `&from=2000-01-01T00:00:00Z`)).map((e) => e.id))
    expect({
      fhrEvent: seen.has(ev.areaFhr),
      smpEvent: seen.has(ev.areaSmp),
      fhrUser: seen.has(ev.signInFhr),
      smpUser: seen.has(ev.signInSmp),
      noOne: seen.has(ev.unknown),
    }).toEqual({ fhrEvent, smpEvent, fhrUser, smpUser, noOne })
  })

  it('refuses the list, the export and the verifier to other roles; the verifier to plant managers', async () => {
    const op = await as('op-fhr')
    await op.get('/api/audit-events').expect(403)
    await op.get('/api/audit-events/export.csv').expect(403)
    await op.post('/api/audit-events/verify').expect(403)
    await (await as('mgr-fhr')).post('/api/audit-events/verify').expect(403)
    await (await signedIn(app, 'engineer')).get('/api/audit-events').expect(403)
    await new ApiAgent(app).get('/api/audit-events').expect(401)
  })

  it("narrows to one site with siteId, never beyond the reader's sites", async () => {
    const a = await as('aud-fhr')
    expect((await visible(a, `&siteId=${smp}`)).length).toBe(0)
    const own = await visible(a, `&siteId=${fhr}`)
    expect(own.map((e) => e.id)).toContain(ev.areaFhr)
    expect(own.every((e) => e.siteId === fhr)).toBe(true)
  })
})

describe('events written before they carried their site', () => {
  it('are placed by the migration from the entity they name, and read with that site', async () => {
    const area = await admin.created('/api/areas', { siteId: smp, name: 'Legacy unit' })
    // an event as an older installation wrote it: no site
    await ctx.db.transaction().execute((trx) =>
      appendAudit(trx, ctx.clock, { actorId: null, requestId: null, ip: null }, [
        { action: 'area.update', entityType: 'Area', entityId: area.id, siteId: null },
        { action: 'limit.delete', entityType: 'Limit', entityId: 999999, before: { siteId: smp }, siteId: null },
      ]),
    )
    const legacy = await lastEvent('area.update', String(area.id))
    const deleted = await lastEvent('limit.delete', '999999')
    const aud = await as('aud-fhr')
    const smpAuditor = await signedIn(app, 'auditor')
    expect((await visible(smpAuditor, `&siteId=${smp}`)).map((e) => e.id)).not.toContain(legacy)

    const owner = createDb(ctx.database.ownerUrl, 1).db
    try {
      await backfillAuditEventSites(owner)
    } finally {
      await owner.destroy()
    }
    const smpEvents = (await visible(smpAuditor, `&siteId=${smp}`)).map((e) => e.id)
    expect(smpEvents).toContain(legacy)
    expect(smpEvents).toContain(deleted)
    expect((await visible(aud)).map((e) => e.id)).not.toContain(legacy)
    // the runtime role reads the derived sites but cannot write them
    await expect(
      ctx.db.insertInto('audit_event_site').values({ event_id: legacy, site_id: fhr }).execute(),
    ).rejects.toMatchObject({ code: '42501' })
  })
})

describe('the list', () => {
  it("names the entity's tag or title and the limit it belongs to", async () => {
    const items = await visible(admin, '&entityType=Area')
    const e = items.find((x) => x.id === ev.areaFhr)!
    expect(e.entityTitle).toBe('Audit scope unit F')
    const users = await visible(admin, `&entityType=User&entityId=${ids['op-smp']}`)
    expect(users[0].entityTitle).toBe('Person op-smp')
  })

  it('filters by time: from inclusive, to exclusive, both instants with an offset', async () => {
    const at = (
      await ctx.db
        .selectFrom('audit_event')
        .select('occurred_at')
        .where('id', '=', ev.areaSmp)
        .executeTakeFirstOrThrow()
    ).occurred_at
    const iso = at.toISOString()
    const later = new Date(at.getTime() + 1).toISOString()
    const inWindow = await visible(admin, `&from=${encodeURIComponent(iso)}&to=${encodeURIComponent(later)}`)
    expect(inWindow.map((e) => e.id)).toContain(ev.areaSmp)
    const before = await visible(admin, `&to=${encodeURIComponent(iso)}`)
    expect(before.map((e) => e.id)).not.toContain(ev.areaSmp)
    // the same instant written with another offset
    const plus2 = new Date(at.getTime() + 2 * 3_600_000).toISOString().replace('Z', '+02:00')
    expect((await visible(admin, `&from=${encodeURIComponent(plus2)}`)).map((e) => e.id)).toContain(ev.areaSmp)
    await admin.get('/api/audit-events?from=yesterday').expect(400)
    await admin.get('/api/audit-events?to=2026-12-03').expect(400)
  })

  it('refuses a sort, and any parameter it does not take, rather than ignoring it (docs/api.md, Audit events)', async () => {
    for (const path of ['/api/audit-events?sort=at', '/api/audit-events?sort=-id', '/api/audit-events?colour=blue']) {
      const res = await admin.get(path).expect(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
    }
    await admin.get('/api/audit-events/export.csv?sort=at').expect(400)
    // the parameters it takes still pass, the export's time zone included
    await admin.get('/api/audit-events?page=1&pageSize=5&q=area&action=area.&entityType=Area').expect(200)
    await admin.get('/api/audit-events/export.csv?tz=UTC&action=area.').expect(200)
  })
})

describe('the CSV export', () => {
  it("holds the reader's events with readable actions, in the asked time zone, formula cells neutralised", async () => {
    const name = '=HYPERLINK("http://x.example","y")'
    await admin.post('/api/areas', { siteId: fhr, name }).expect(201)
    const res = await (
      await as('aud-fhr')
    )
      .get('/api/audit-events/export.csv?tz=Asia/Kolkata&action=area.')
      .expect(200)
      .expect('Content-Type', /text\/csv/)
    expect(res.text.startsWith('\uFEFF')).toBe(true)
    const rows = Papa.parse<Record<string, string>>(res.text.slice(1), { header: true, skipEmptyLines: true }).data
    expect(rows.length).toBeGreaterThan(0)
    expect(rows.every((r) => r.Site === 'FHR')).toBe(true)
    const first = rows.find((r) => r.Event === String(ev.areaFhr))!
    expect(first.Action).toBe('Area created')
    expect(first['Action code']).toBe('area.create')
    expect(first.Record).toBe('Audit scope unit F')
    // India Standard Time is UTC+05:30 all year (no daylight saving)
    const utc = new Date(first['Time (UTC)'])
    const shifted = new Date(utc.getTime() + 5.5 * 3_600_000).toISOString().slice(0, 19).replace('T', ' ')
    expect(first['Time (Asia/Kolkata)']).toBe(shifted)
    const evil = rows.find((r) => r.Record.includes('HYPERLINK'))!
    expect(evil.Record).toBe(`'${name}`)
    expect(rows.map((r) => r.Event)).not.toContain(String(ev.areaSmp))
  })

  it('refuses an unknown time zone', async () => {
    await admin.get('/api/audit-events/export.csv?tz=Mars/Olympus').expect(400)
  })
})

describe('the verifier from the screen', () => {
  let su: pg.Client
  beforeAll(async () => {
    su = new pg.Client({ connectionString: ctx.database.superUrl })
    await su.connect()
  })
  afterAll(async () => {
    await su.end()
  })

  it('names the first event concerned once an event is changed behind the app', async () => {
    await su.query('BEGIN')
    await su.query('ALTER TABLE audit_event DISABLE TRIGGER USER')
    await su.query(`UPDATE audit_event SET reason = 'changed' WHERE id = $1`, [ev.areaSmp])
    await su.query('ALTER TABLE audit_event ENABLE TRIGGER USER')
    await su.query('COMMIT')
    const res = await (await signedIn(app, 'auditor')).post('/api/audit-events/verify').expect(200)
    expect(res.body).toMatchObject({ ok: false, badId: ev.areaSmp, problem: 'hash does not match content' })
  })
})
