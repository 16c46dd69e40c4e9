import { spawn } from 'node:child_process'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { sql } from 'kysely'
import pg from 'pg'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { createApp } from '../../server/app.ts'
import { AdjustableClock } from '../../server/clock.ts'
import type { AuditEventTable } from '../../server/db/schema.ts'
import { dataOf } from '../../server/features/audit/audit.chain.ts'
import { dataHash, sealHash } from '../../server/features/audit/audit.hash.ts'
import {
  appendAudit,
  sealAll,
  UNSEALED_BOUND_SECONDS,
  verifyAuditChain,
} from '../../server/features/audit/audit.repository.ts'
import { ApiAgent } from './helpers/agent.ts'
import { runCli } from './helpers/start-process.ts'
import { useTestDb } from './helpers/test-db.ts'

const ctx = useTestDb()
const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..')
const noActor = { actorId: null, requestId: null, ip: null }

type Row = {
  [K in keyof AuditEventTable]: K extends 'id'
    ? number
    : K extends 'occurred_at'
      ? Date
      : K extends 'before' | 'after'
        ? unknown
        : AuditEventTable[K]
}

/** The hash a stored row should carry, recomputed from what was read back (format 3: data hash, then seal). */
function rehash(r: Row) {
  const dHash = dataHash(dataOf({ ...r, id: Number(r.id), occurred_ms: r.occurred_at.getTime() }))
  return {
    dataHash: dHash,
    hash: sealHash({ id: Number(r.id), seq: Number(r.seq), dataHash: dHash, prevHash: r.prev_hash! }),
  }
}

/** Runs one statement on its own connection and answers the SQLSTATE it failed with (null when it worked). */
async function sqlState(client: pg.Client, text: string): Promise<string | null> {
  try {
    await client.query(text)
    return null
  } catch (err) {
    return (err as { code?: string }).code ?? 'no code'
  }
}

/** Runs `npm run audit:verify` (its script, without npm) against this file's database. */
const auditVerifyCli = (env: NodeJS.ProcessEnv = { ...process.env, DATABASE_URL: ctx.database.appUrl }) =>
  runCli('audit-verify', env)

// 21 CFR 11.10(e): secure, computer-generated, time-stamped audit trail that operators cannot alter
describe('the runtime role and the audit table', () => {
  let rt: pg.Client
  let owner: pg.Client
  beforeAll(async () => {
    rt = new pg.Client({ connectionString: ctx.database.appUrl })
    owner = new pg.Client({ connectionString: ctx.database.ownerUrl })
    await rt.connect()
    await owner.connect()
  })
  afterAll(async () => {
    await rt?.end()
    await owner?.end()
  })

  it('reads and appends, but cannot UPDATE, DELETE, TRUNCATE or switch off the triggers (SQLSTATE 42501)', async () => {
    const { rows } = await rt.query('SELECT current_user AS who, count(*)::int AS n FROM audit_event')
    expect(rows[0].who).toBe('limitkeeper_app')
    expect(rows[0].n).toBeGreaterThan(0) // the demo seed's event: UPDATE and DELETE below have a row to hit

    expect(await sqlState(rt, "UPDATE audit_event SET reason = 'changed'")).toBe('42501')
    expect(await sqlState(rt, 'DELETE FROM audit_event')).toBe('42501')
    expect(await sqlState(rt, 'TRUNCATE audit_event')).toBe('42501')
    expect(await sqlState(rt, 'ALTER TABLE audit_event DISABLE TRIGGER ALL')).toBe('42501')
    expect(await sqlState(rt, 'ALTER TABLE audit_event DISABLE TRIGGER USER')).toBe('42501')
    expect(await sqlState(rt, 'DROP TRIGGER audit_event_no_update_delete ON audit_event')).toBe('42501')
    expect(await sqlState(rt, 'SET session_replication_role = replica')).toBe('42501') // would skip ordinary triggers

    // the same role may change ordinary tables: the refusal is specific to the audit trail
    expect(await sqlState(rt, 'UPDATE site SET name = name WHERE false')).toBeNull()
    const after = await rt.query('SELECT count(*)::int AS n FROM audit_event')
    expect(after.rows[0].n).toBe(rows[0].n)
  })

  it('stops even the owner role through the append-only triggers', async () => {
    expect(await sqlState(owner, "UPDATE audit_event SET reason = 'changed'")).toBe('42501')
    expect(await sqlState(owner, 'DELETE FROM audit_event')).toBe('42501')
    expect(await sqlState(owner, 'TRUNCATE audit_event')).toBe('42501')
    await expect(owner.query('DELETE FROM audit_event')).rejects.toThrow(/append-only/)
  })
})

describe('audit events', () => {
  it('are written by a change with its actor, request id and client address, in the same transaction', async () => {
    const app = createApp(ctx)
    const admin = new ApiAgent(app)
    const { user } = await admin.signIn('admin@fernhollow.example')
    const area = await admin
      .post('/api/areas', { siteId: 1, name: 'Sulphur Recovery' })
      .set('X-Request-Id', 'req-audit-1')
      .expect(201)
    const ev = await ctx.db.selectFrom('audit_event').selectAll().where('request_id', '=', 'req-audit-1').execute()
    expect(ev).toHaveLength(1)
    expect(ev[0]).toMatchObject({
      action: 'area.create',
      entity_type: 'Area',
      entity_id: String(area.body.id),
      after: area.body,
    })
    expect(ev[0].actor_id).toBe(user.id)
    expect(ev[0].ip).toMatch(/127\.0\.0\.1/)

    // a business transaction that fails after appending leaves neither the change nor its event
    const before = await ctx.db
      .selectFrom('audit_event')
      .select((eb) => eb.fn.countAll<number>().as('n'))
      .executeTakeFirstOrThrow()
    await expect(
      ctx.db.transaction().execute(async (trx) => {
        await trx.insertInto('area').values({ site_id: 1, name: 'Never Built' }).execute()
        await appendAudit(trx, ctx.clock, noActor, {
          action: 'area.create',
          entityType: 'Area',
          after: { name: 'Never Built' },
        })
        throw new Error('the change failed after its audit event')
      }),
    ).rejects.toThrow('the change failed')
    expect(await ctx.db.selectFrom('area').select('id').where('name', '=', 'Never Built').execute()).toEqual([])
    const after = await ctx.db
      .selectFrom('audit_event')
      .select((eb) => eb.fn.countAll<number>().as('n'))
      .executeTakeFirstOrThrow()
    expect(after.n).toBe(before.n)
  })

  // what is read back must re-hash identically (jsonb reorders keys; timestamptz(3) keeps milliseconds)
  it('re-hash identically from what is read back, for awkward values', async () => {
    const clock = new AdjustableClock({ now: () => new Date('2026-03-04T05:06:07.999Z') })
    const after = {
      text: 'Ölstand ≥ 95 % — Überfüllsicherung 🔥 \u2028 "quoted" \\ back\\slash \t tab <b>&amp;</b>',
      combining: 'e\u0301 vs \u00e9', // not normalised: two different strings
      nested: {
        zeta: 1,
        alpha: { delta: [3, { z: 1, y: 2, ä: 'ü', '': 'empty key' }], gamma: null },
        b: true,
        aa: false,
        10: 'ten',
        9: 'nine',
      },
      numbers: [
        0,
        -0,
        1e21,
        1e-7,
        0.1 + 0.2,
        Number.MAX_SAFE_INTEGER,
        2 ** 53 + 2,
        1.7976931348623157e308,
        5e-324,
        -123.456e-10,
      ],
      exactDecimal: '123456789012345678901234567890.000000000000000001',
      nulls: { a: null, b: undefined, c: [undefined, null] },
      when: new Date('2026-01-02T03:04:05.006Z'),
      empty: { list: [], object: {}, string: '' },
    }
    await ctx.db.transaction().execute((trx) =>
      appendAudit(trx, clock, { actorId: 1, requestId: 'req-ä-🔥', ip: '2001:db8::1' }, [
        {
          action: 'test.awkward',
          entityType: 'Limit',
          entityId: 42,
          after,
          reason: 'Grund: Prüfung ✓',
          batchId: '6f1c1f0e-8d5b-4c8e-9d0a-3b2f5f1e2a77',
        },
        { action: 'test.awkward', entityType: 'Limit', entityId: 'TZ-101/A', before: undefined, after: null },
        { action: 'test.awkward', entityType: 'Limit', before: [after.nested], after: { n: -0.000001 } },
      ]),
    )
    await sealAll(ctx.db, ctx.clock)
    const rows = (await ctx.db
      .selectFrom('audit_event')
      .selectAll()
      .where('action', '=', 'test.awkward')
      .orderBy('id')
      .execute()) as Row[]
    expect(rows).toHaveLength(3)
    for (const r of rows) {
      expect(r.occurred_at.toISOString()).toBe('2026-03-04T05:06:07.999Z')
      expect(rehash(r)).toEqual({ dataHash: r.data_hash, hash: r.hash })
    }
    // the values come back as JSON would give them (undefined → null or dropped, dates as ISO text), unicode untouched
    expect(rows[0].after).toEqual(JSON.parse(JSON.stringify(after)))
    expect(rows[0].after).toMatchObject({
      text: after.text,
      combining: after.combining,
      when: '2026-01-02T03:04:05.006Z',
      exactDecimal: after.exactDecimal,
    })
    expect((rows[0].after as { numbers: number[] }).numbers).toEqual([
      0,
      0,
      1e21,
      1e-7,
      0.1 + 0.2,
      9007199254740991,
      9007199254740994,
      1.7976931348623157e308,
      5e-324,
      -123.456e-10,
    ])
    expect(rows[0].entity_id).toBe('42')
    expect(rows[1].before).toBeNull()
    expect(rows[1].after).toBeNull()
    expect(rows[2].entity_id).toBeNull()
    // events that wait together are sealed in id order, one after another
    expect(Number(rows[1].seq)).toBe(Number(rows[0].seq) + 1)
    expect(rows[1].prev_hash).toBe(rows[0].hash)
    expect(rows[2].prev_hash).toBe(rows[1].hash)
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true })
  })

  it('keeps a recorded state as the text written, a NUL jsonb could not hold included, and verifies it', async () => {
    // the states are json, the text as the app wrote it (migration 2026_12_09_100000); jsonb refused NUL (22P05)
    await ctx.db.transaction().execute((trx) =>
      appendAudit(trx, ctx.clock, noActor, {
        action: 'test.nul',
        entityType: 'System',
        after: { zeta: 1.5, s: 'a\u0000b', alpha: [1, { b: true }] },
      }),
    )
    await sealAll(ctx.db, ctx.clock)
    const { rows } = await sql<{ text: string; after: unknown }>`
      SELECT after::text AS text, after FROM audit_event WHERE action = 'test.nul'`.execute(ctx.db)
    expect(rows).toEqual([
      {
        text: '{"zeta":1.5,"s":"a\\u0000b","alpha":[1,{"b":true}]}',
        after: { zeta: 1.5, s: 'a\u0000b', alpha: [1, { b: true }] },
      },
    ])
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true })
  })
})

describe('the sealer', () => {
  const write = (n: number, tag: string) =>
    ctx.db.transaction().execute((trx) =>
      appendAudit(
        trx,
        ctx.clock,
        noActor,
        Array.from({ length: n }, (_, i) => ({
          action: 'test.sealer',
          entityType: 'System' as const,
          entityId: `${tag}-${i}`,
        })),
      ),
    )
  const unsealed = async () =>
    Number(
      (
        await ctx.db
          .selectFrom('audit_event')
          .select((eb) => eb.fn.countAll<string>().as('n'))
          .where('seq', 'is', null)
          .executeTakeFirstOrThrow()
      ).n,
    )

  it('loses nothing when killed in the middle of a batch: the next run seals everything and the chain verifies', async () => {
    await sealAll(ctx.db, ctx.clock)
    const before = await verifyAuditChain(ctx.db)
    expect(before.ok).toBe(true)
    await write(300, 'crash') // committed, waiting for their seal
    expect(await unsealed()).toBe(300)
    const [first, , last] = await ctx.db
      .selectFrom('audit_event')
      .select('id')
      .where('seq', 'is', null)
      .orderBy('id')
      .execute()
      .then((r) => [r[0], null, r[r.length - 1]])

    // a row lock on the batch's last event makes the sealer's UPDATE wait there, in the middle of its batch
    const blocker = new pg.Client({ connectionString: ctx.database.superUrl })
    await blocker.connect()
    const child = spawn(process.execPath, ['--import', 'tsx', 'tests/api/helpers/seal-once.ts'], {
      cwd: root,
      env: { ...process.env, DATABASE_URL: ctx.database.appUrl },
      stdio: ['ignore', 'pipe', 'pipe'],
    })
    const exited = new Promise<{ code: number | null; signal: string | null; out: string }>((resolve) => {
      let out = ''
      child.stdout.on('data', (d) => (out += d))
      child.stderr.on('data', (d) => (out += d))
      child.on('exit', (code, signal) => resolve({ code, signal, out }))
    })
    try {
      await blocker.query('BEGIN')
      await blocker.query('SELECT id FROM audit_event WHERE id = $1 FOR UPDATE', [last!.id])
      // wait (on the database's own state, not a timer) until the sealer's UPDATE is blocked by that lock; asked
      // outside the blocker's transaction, which would see one snapshot of pg_stat_activity
      await expect
        .poll(
          async () =>
            (
              await sql<{ n: number }>`
                SELECT count(*)::int AS n FROM pg_stat_activity
                WHERE datname = current_database() AND wait_event_type = 'Lock' AND query LIKE '%UPDATE audit_event e%'`.execute(
                ctx.db,
              )
            ).rows[0].n,
          { timeout: 60_000, interval: 100 },
        )
        .toBe(1)
      child.kill('SIGKILL')
      const end = await exited
      expect(end.signal).toBe('SIGKILL')
      expect(end.out).not.toContain('sealed')
      await blocker.query('ROLLBACK')
    } finally {
      child.kill('SIGKILL')
      await blocker.end()
    }

    // the killed batch was never committed: every event still waits, none half-sealed, the chain unchanged
    await expect.poll(unsealed, { timeout: 30_000 }).toBe(300)
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true, checked: before.checked, unsealed: 300 })
    // the next run seals every one of them, in id order after the former head
    expect(await sealAll(ctx.db, ctx.clock)).toBe(300)
    const sealed = await ctx.db
      .selectFrom('audit_event')
      .select(['id', 'seq'])
      .where('action', '=', 'test.sealer')
      .orderBy('seq')
      .execute()
    expect(sealed).toHaveLength(300)
    expect(Number(sealed[0].id)).toBe(Number(first!.id))
    expect(sealed.map((r) => Number(r.seq))).toEqual(sealed.map((_, i) => before.headSeq! + 1 + i))
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true, checked: before.checked + 300 })
  }, 120_000)

  it('seals an event that commits after a later id was sealed, further along the chain', async () => {
    await sealAll(ctx.db, ctx.clock)
    let release!: () => void
    const hold = new Promise<void>((r) => (release = r))
    let written!: () => void
    const isWritten = new Promise<void>((r) => (written = r))
    // an early id whose transaction stays open
    const slow = ctx.db.transaction().execute(async (trx) => {
      await appendAudit(trx, ctx.clock, noActor, { action: 'test.late', entityType: 'System', entityId: 'slow' })
      written()
      await hold
    })
    await isWritten
    await ctx.db
      .transaction()
      .execute((trx) =>
        appendAudit(trx, ctx.clock, noActor, { action: 'test.late', entityType: 'System', entityId: 'fast' }),
      )
    expect(await sealAll(ctx.db, ctx.clock)).toBe(1) // only the committed one
    release()
    await slow
    expect(await sealAll(ctx.db, ctx.clock)).toBe(1)
    const rows = await ctx.db
      .selectFrom('audit_event')
      .select(['id', 'seq', 'entity_id'])
      .where('action', '=', 'test.late')
      .orderBy('seq')
      .execute()
    expect(rows.map((r) => r.entity_id)).toEqual(['fast', 'slow'])
    expect(Number(rows[0].id)).toBeGreaterThan(Number(rows[1].id))
    expect(Number(rows[1].seq)).toBe(Number(rows[0].seq) + 1)
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true })
  })

  it('reports an event left unsealed longer than the bound, and is content once it is sealed', async () => {
    await sealAll(ctx.db, ctx.clock)
    const t0 = ctx.clock.now()
    await write(1, 'late')
    const [ev] = await ctx.db.selectFrom('audit_event').select('id').where('seq', 'is', null).execute()
    expect(await verifyAuditChain(ctx.db, { clock: ctx.clock })).toMatchObject({ ok: true, unsealed: 1 })
    ctx.clock.set(new Date(t0.getTime() + (UNSEALED_BOUND_SECONDS + 1) * 1000))
    expect(await verifyAuditChain(ctx.db, { clock: ctx.clock })).toMatchObject({
      ok: false,
      badId: Number(ev.id),
      problem: expect.stringMatching(/has waited 6\d s unsealed \(more than 60 s\): the sealer is not running/),
    })
    await sealAll(ctx.db, ctx.clock)
    expect(await verifyAuditChain(ctx.db, { clock: ctx.clock })).toMatchObject({ ok: true })
  })

  it('lets the runtime role seal an event once, and nothing else: no sealed insert, no reseal, no content change', async () => {
    await write(1, 'trigger')
    const [ev] = await ctx.db.selectFrom('audit_event').select('id').where('seq', 'is', null).execute()
    const rt = new pg.Client({ connectionString: ctx.database.appUrl })
    await rt.connect()
    try {
      const h = 'a'.repeat(64)
      expect(
        await sqlState(
          rt,
          `INSERT INTO audit_event (occurred_at, action, entity_type, seq, prev_hash, hash, link)
           VALUES (now(), 'test.forged', 'System', 999999, '${h}', '${'b'.repeat(64)}', '${h}')`,
        ),
      ).toBe('42501')
      // changing the content while sealing is refused (the role may not write content columns at all)
      expect(await sqlState(rt, `UPDATE audit_event SET reason = 'x', seq = 999999 WHERE id = ${ev.id}`)).toBe('42501')
      await sealAll(ctx.db, ctx.clock)
      // a sealed event cannot be sealed again
      expect(await sqlState(rt, `UPDATE audit_event SET seq = 999999 WHERE id = ${ev.id}`)).toBe('42501')
      expect(await sqlState(rt, `UPDATE audit_event SET hash = '${h}' WHERE id = ${ev.id}`)).toBe('42501')
    } finally {
      await rt.end()
    }
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true })
  })
})

describe('the hash chain', () => {
  it('stays intact with 8 concurrent writers × 25 events', async () => {
    const writers = 8
    const perWriter = 25
    const before = await verifyAuditChain(ctx.db)
    expect(before.ok).toBe(true)

    // a barrier: every transaction is open before any of them appends
    let arrived = 0
    let release!: () => void
    const allOpen = new Promise<void>((resolve) => {
      release = resolve
    })
    await Promise.all(
      Array.from({ length: writers }, (_, w) =>
        ctx.db.transaction().execute(async (trx) => {
          await sql`SELECT 1`.execute(trx)
          if (++arrived === writers) release()
          await allOpen
          for (let i = 0; i < perWriter; i++) {
            await appendAudit(
              trx,
              ctx.clock,
              { actorId: null, requestId: `writer-${w}`, ip: null },
              { action: 'test.concurrent', entityType: 'System', entityId: `${w}-${i}`, after: { w, i } },
            )
          }
        }),
      ),
    )

    // nobody waited on a lock: every event is there, unsealed, until the sealer links them
    const written = await ctx.db
      .selectFrom('audit_event')
      .select(['id', 'seq', 'request_id'])
      .where('action', '=', 'test.concurrent')
      .execute()
    expect(written).toHaveLength(writers * perWriter)
    expect(written.every((r) => r.seq === null)).toBe(true)
    expect(await sealAll(ctx.db, ctx.clock)).toBe(writers * perWriter)

    const result = await verifyAuditChain(ctx.db)
    expect(result).toMatchObject({ ok: true, checked: before.checked + writers * perWriter })
    expect(result.unsealed).toBeUndefined()
    const rows = await ctx.db
      .selectFrom('audit_event')
      .select(['id', 'seq', 'request_id'])
      .where('action', '=', 'test.concurrent')
      .orderBy('seq')
      .execute()
    expect(rows).toHaveLength(writers * perWriter)
    // one chain position each, one after another after the chain's former head; every writer's events in its order
    expect(rows.map((r) => Number(r.seq))).toEqual(rows.map((_, i) => before.checked + 1 + i))
    const runs = new Map<string, number[]>()
    for (const r of rows) runs.set(r.request_id!, [...(runs.get(r.request_id!) ?? []), Number(r.id)])
    expect(runs.size).toBe(writers)
    for (const ids of runs.values()) {
      expect(ids).toHaveLength(perWriter)
      expect(ids).toEqual([...ids].sort((a, b) => a - b))
    }
  })

  // 21 CFR 11.10(e) and the issue: tampering by someone who bypasses the app (a superuser) is detected
  it('catches a row altered by a superuser, in the repository check and in `npm run audit:verify`', async () => {
    const intact = await auditVerifyCli()
    expect(intact.code).toBe(0)
    expect(intact.out).toMatch(/Audit trail intact: \d+ events/)
    // without DATABASE_URL it reaches the local cluster the way `PGPORT=… npm start` does (PGPORT, DB_NAME)
    const { DATABASE_URL: _unset, ...rest } = process.env
    void _unset
    const local = await auditVerifyCli({
      ...rest,
      PGPORT: new URL(ctx.database.appUrl).port,
      DB_NAME: ctx.database.name,
    })
    expect(local.out).toMatch(/Audit trail intact: \d+ events/)
    expect(local.code).toBe(0)

    const victim = await ctx.db
      .selectFrom('audit_event')
      .selectAll()
      .where('action', '=', 'test.concurrent')
      .orderBy('id')
      .offset(100)
      .limit(1)
      .executeTakeFirstOrThrow()
    const earlier = (
      await ctx.db
        .selectFrom('audit_event')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .where('seq', '<', victim.seq!)
        .executeTakeFirstOrThrow()
    ).n
    const su = new pg.Client({ connectionString: ctx.database.superUrl })
    await su.connect()
    try {
      const tamper = async (sqlText: string, values: unknown[]) => {
        await su.query('BEGIN')
        await su.query('ALTER TABLE audit_event DISABLE TRIGGER USER')
        await su.query(sqlText, values)
        await su.query('ALTER TABLE audit_event ENABLE TRIGGER USER')
        await su.query('COMMIT')
      }
      await tamper('UPDATE audit_event SET after = $1 WHERE id = $2', [JSON.stringify({ w: 0, i: 99 }), victim.id])

      const broken = await verifyAuditChain(ctx.db)
      expect(broken).toEqual({
        ok: false,
        checked: earlier,
        badId: Number(victim.id),
        badSeq: Number(victim.seq),
        problem: 'hash does not match content',
      })
      const cli = await auditVerifyCli()
      expect(cli.code).toBe(1)
      expect(cli.out).toContain(`BROKEN at event ${victim.id}:`)

      // the triggers are back on: the runtime role still cannot repair it either
      const rt = new pg.Client({ connectionString: ctx.database.appUrl })
      await rt.connect()
      expect(await sqlState(rt, `UPDATE audit_event SET after = after WHERE id = ${victim.id}`)).toBe('42501')
      await rt.end()

      // put the original content back: the check is about content, so the chain verifies again
      await tamper('UPDATE audit_event SET after = $1 WHERE id = $2', [JSON.stringify(victim.after), victim.id])
      expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true })

      // a forger who also recomputes the row's own hash, without the audit key, is caught by its keyed link
      const forged = { ...victim, after: { w: 0, i: 99 } } as Row
      const recomputed = rehash(forged)
      await tamper('UPDATE audit_event SET after = $1, data_hash = $2, hash = $3 WHERE id = $4', [
        JSON.stringify(forged.after),
        recomputed.dataHash,
        recomputed.hash,
        victim.id,
      ])
      expect(await verifyAuditChain(ctx.db)).toEqual({
        ok: false,
        checked: earlier,
        badId: Number(victim.id),
        badSeq: Number(victim.seq),
        problem: 'keyed link does not match: written or rewritten without the audit key',
      })
    } finally {
      await su.end()
    }
  }, 120_000) // starts the CLI twice (tsx start-up)
})
