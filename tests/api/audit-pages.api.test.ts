import pg from 'pg'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { dataHash, sealHash } from '../../server/features/audit/audit.hash.ts'
import {
  appendAuditAlone,
  type CheckpointClaim,
  sealAll,
  verifyAuditChain,
} from '../../server/features/audit/audit.repository.ts'
import { useTestDb } from './helpers/test-db.ts'

// The chain walked in pages checked side by side by worker threads (docs/adr/0003-audit-hash-chain.md, "Verify"):
// it must answer exactly as the walk in one piece, for an intact chain and for every kind of tampering, also where
// the tampering sits at the edge between two pages. Pages of 7 events; the one-piece walk reads the chain as one page
// in this thread. The expected problems are those the one-piece walk names (tests/api/audit-keyed.api.test.ts checks
// them against hand-made tampering too).
const ctx = useTestDb()
const noActor = { actorId: null, requestId: null, ip: null }
const PAGE = 7
let su: pg.Client

type Row = Record<string, unknown> & { id: string; seq: string; hash: string; prev_hash: string; data_hash: string }
const rows = async (): Promise<Row[]> => (await su.query('SELECT * FROM audit_event ORDER BY seq')).rows

/** Both walks, which must agree; answers the one-piece walk's result. */
async function walkBoth(checkpoints: CheckpointClaim[] = []) {
  const whole = await verifyAuditChain(ctx.db, { checkpoints, workers: 0 })
  const paged = await verifyAuditChain(ctx.db, { checkpoints, pageSize: PAGE, workers: 2 })
  const pagedHere = await verifyAuditChain(ctx.db, { checkpoints, pageSize: PAGE, workers: 0 })
  expect(paged).toEqual(whole)
  expect(pagedHere).toEqual(whole)
  return whole
}

/** Runs statements as a superuser with the append-only triggers off, as an attacker holding the database would. */
async function asSuperuser(statements: [string, unknown[]][]) {
  await su.query('BEGIN')
  await su.query('ALTER TABLE audit_event DISABLE TRIGGER USER')
  for (const [text, values] of statements) await su.query(text, values)
  await su.query('ALTER TABLE audit_event ENABLE TRIGGER USER')
  await su.query('COMMIT')
}

/** A checkpoint as `npm run audit:checkpoint` would have signed it at chain position `seq`. */
function claimAt(all: Row[], seq: number, file = `checkpoint-${seq}.json`): CheckpointClaim {
  const upTo = all.filter((r) => Number(r.seq) <= seq)
  const keyed = upTo.find((r) => r.link !== null)
  return {
    file,
    headSeq: seq,
    headHash: upTo.at(-1)!.hash,
    count: upTo.length,
    firstKeyedSeq: keyed ? Number(keyed.seq) : null,
  }
}

beforeAll(async () => {
  su = new pg.Client({ connectionString: ctx.database.superUrl })
  await su.connect()
  for (let i = 0; i < 40; i++)
    await appendAuditAlone(ctx.db, ctx.clock, noActor, {
      action: 'test.event',
      entityType: 'System',
      entityId: i,
      after: { n: i, note: i % 3 ? 'plain' : 'tab\tquote" ä 🔥', zeta: 1, alpha: [i, null, 2.5] },
    })
  await sealAll(ctx.db, ctx.clock)
})
afterAll(async () => {
  await su?.end()
})

describe('the chain walked in pages by worker threads', () => {
  it('finds an intact chain intact, with the same head and count as the walk in one piece', async () => {
    const all = await rows()
    expect(all.length).toBeGreaterThan(4 * PAGE)
    const r = await walkBoth([claimAt(all, PAGE), claimAt(all, PAGE + 1), claimAt(all, all.length)])
    expect(r).toMatchObject({ ok: true, checked: all.length, headSeq: all.length, headHash: all.at(-1)!.hash })
  })

  it('holds each checkpoint to the count, hash and first keyed position where its head lies', async () => {
    const all = await rows()
    const good = claimAt(all, 2 * PAGE)
    for (const bad of [
      { ...good, count: good.count - 1 },
      { ...good, headHash: all[0].hash },
      { ...good, firstKeyedSeq: 2 },
      { ...good, headSeq: all.length + 3 },
    ]) {
      const r = await walkBoth([claimAt(all, PAGE), bad])
      expect(r.ok).toBe(false)
      expect(r.checkpoint).toBe(good.file)
    }
  })

  it('catches an event changed at the first, middle and last place of a page', async () => {
    const all = await rows()
    for (const i of [PAGE, PAGE + 3, 2 * PAGE - 1]) {
      const victim = all[i]
      await asSuperuser([["UPDATE audit_event SET reason = 'changed' WHERE id = $1", [victim.id]]])
      expect(await walkBoth()).toEqual({
        ok: false,
        checked: i,
        badId: Number(victim.id),
        badSeq: Number(victim.seq),
        problem: 'hash does not match content',
      })
      await asSuperuser([['UPDATE audit_event SET reason = $1 WHERE id = $2', [victim.reason, victim.id]]])
    }
    expect(await walkBoth()).toMatchObject({ ok: true })
  })

  it('catches an event deleted at the edge of a page, and one whose hashes were recomputed without the key', async () => {
    const all = await rows()
    const victim = all[2 * PAGE]
    await asSuperuser([['DELETE FROM audit_event WHERE id = $1', [victim.id]]])
    expect(await walkBoth()).toMatchObject({
      ok: false,
      checked: 2 * PAGE,
      badSeq: Number(victim.seq),
      badId: Number(all[2 * PAGE + 1].id),
    })
    const cols = Object.keys(victim)
    await asSuperuser([
      [
        `INSERT INTO audit_event (${cols.join(', ')}) VALUES (${cols.map((_, i) => `$${i + 1}`).join(', ')})`,
        cols.map((k) => (k === 'before' || k === 'after' ? JSON.stringify(victim[k]) : victim[k])),
      ],
    ])
    expect(await walkBoth()).toMatchObject({ ok: true })

    // the first event of a page rewritten with hashes anyone can recompute: its link no longer matches, and the next
    // page's first event no longer ties to it
    const first = all[3 * PAGE]
    const d = dataHash({
      siteId: null,
      occurredAt: first.occurred_at as Date,
      actorId: null,
      action: first.action as string,
      entityType: first.entity_type as string,
      entityId: first.entity_id as string,
      before: first.before,
      after: first.after,
      reason: 'rewritten',
      batchId: null,
      requestId: null,
      ip: null,
    })
    const hash = sealHash({ id: Number(first.id), seq: Number(first.seq), dataHash: d, prevHash: first.prev_hash })
    await asSuperuser([
      ["UPDATE audit_event SET reason = 'rewritten', data_hash = $1, hash = $2 WHERE id = $3", [d, hash, first.id]],
    ])
    expect(await walkBoth()).toEqual({
      ok: false,
      checked: 3 * PAGE,
      badId: Number(first.id),
      badSeq: Number(first.seq),
      problem: 'keyed link does not match: written or rewritten without the audit key',
    })
    await asSuperuser([
      [
        'UPDATE audit_event SET reason = $1, data_hash = $2, hash = $3 WHERE id = $4',
        [first.reason, first.data_hash, first.hash, first.id],
      ],
    ])
    expect(await walkBoth()).toMatchObject({ ok: true })
  })

  it('catches a page whose first event lost its keyed link or points to another predecessor', async () => {
    const all = await rows()
    const first = all[PAGE]
    await asSuperuser([['UPDATE audit_event SET link = NULL WHERE id = $1', [first.id]]])
    expect(await walkBoth()).toMatchObject({ ok: false, badId: Number(first.id) })
    await asSuperuser([['UPDATE audit_event SET link = $1 WHERE id = $2', [first.link, first.id]]])
    await asSuperuser([['UPDATE audit_event SET prev_hash = $1 WHERE id = $2', ['f'.repeat(64), first.id]]])
    expect(await walkBoth()).toMatchObject({
      ok: false,
      badId: Number(first.id),
      problem: 'prev_hash does not match the previous event',
    })
    await asSuperuser([['UPDATE audit_event SET prev_hash = $1 WHERE id = $2', [first.prev_hash, first.id]]])
    expect(await walkBoth()).toMatchObject({ ok: true, checked: all.length })
  })
})
