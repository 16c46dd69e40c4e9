import { execFile } from 'node:child_process'
import { mkdtemp, readdir, readFile, writeFile } from 'node:fs/promises'
import os from 'node:os'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { promisify } from 'node:util'
import pg from 'pg'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { hashEvent } from '../../server/features/audit/audit.hash.ts'
import { linkOf } from '../../server/features/audit/audit.key.ts'
import { appendAuditAlone, verifyAuditChain } from '../../server/features/audit/audit.repository.ts'
import { useTestDb } from './helpers/test-db.ts'

// The audit trail beyond the database's reach: keyed links (HMAC-SHA256, RFC 2104) with a key the database never
// holds, and Ed25519 (RFC 8032) signed checkpoints of the head kept outside PostgreSQL. 21 CFR 11.10(e): an audit
// trail whose records cannot be altered unseen.
const ctx = useTestDb()
const run = promisify(execFile)
const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..')
const noActor = { actorId: null, requestId: null, ip: null }
let dir = ''
let su: pg.Client

async function cli(script: 'audit-verify' | 'audit-checkpoint'): Promise<{ code: number; out: string }> {
  try {
    const { stdout } = await run(process.execPath, ['--import', 'tsx', `server/cli/${script}.ts`], {
      cwd: root,
      env: { ...process.env, DATABASE_URL: ctx.database.appUrl, AUDIT_CHECKPOINT_DIR: dir },
      timeout: 60_000,
    })
    return { code: 0, out: stdout }
  } catch (err) {
    const e = err as { code?: number; stdout?: string; stderr?: string }
    return { code: typeof e.code === 'number' ? e.code : -1, out: `${e.stdout ?? ''}${e.stderr ?? ''}` }
  }
}

/** Runs statements as a superuser with the append-only triggers off, as an attacker holding the database would. */
async function asSuperuser(statements: [string, unknown[]][]) {
  await su.query('BEGIN')
  await su.query('ALTER TABLE audit_event DISABLE TRIGGER USER')
  for (const [text, values] of statements) await su.query(text, values)
  await su.query('ALTER TABLE audit_event ENABLE TRIGGER USER')
  await su.query('COMMIT')
}

type Row = Record<string, unknown> & { id: string; hash: string; prev_hash: string; link: string | null }
const rows = async (): Promise<Row[]> => (await su.query('SELECT * FROM audit_event ORDER BY id')).rows

/** The hash an event would carry with this content, recomputable by anyone who reads the table (no key needed). */
function hashOf(r: Row, prevHash: string, id = Number(r.id)) {
  return hashEvent({
    occurredAt: r.occurred_at as Date,
    actorId: r.actor_id as number | null,
    action: r.action as string,
    entityType: r.entity_type as string,
    entityId: r.entity_id as string | null,
    before: r.before,
    after: r.after,
    reason: r.reason as string | null,
    batchId: r.batch_id as string | null,
    requestId: r.request_id as string | null,
    ip: r.ip as string | null,
    prevHash,
    keyed: { id, siteId: r.site_id as number | null },
  })
}

beforeAll(async () => {
  dir = await mkdtemp(path.join(os.tmpdir(), 'lk-checkpoints-'))
  su = new pg.Client({ connectionString: ctx.database.superUrl })
  await su.connect()
  for (let i = 0; i < 12; i++)
    await appendAuditAlone(ctx.db, ctx.clock, noActor, { action: 'test.event', entityType: 'System', entityId: i })
})
afterAll(async () => {
  await su?.end()
})

describe('keyed links', () => {
  it('every new event carries a keyed link and the ids follow one another', async () => {
    const all = await rows()
    expect(all.length).toBeGreaterThan(12)
    expect(all.every((r) => r.link !== null && /^[0-9a-f]{64}$/.test(r.link))).toBe(true)
    expect(all.map((r) => Number(r.id))).toEqual(all.map((_, i) => i + 1))
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true, checked: all.length })
  })

  it('refuses an event the runtime role appends with a correct hash but without the key', async () => {
    const all = await rows()
    const head = all[all.length - 1]
    const id = Number(head.id) + 1
    const forged = {
      ...head,
      action: 'change_request.approve',
      entity_type: 'ChangeRequest',
      entity_id: '1',
      occurred_at: new Date(),
    } as Row
    const hash = hashOf(forged, head.hash, id)
    const rt = new pg.Client({ connectionString: ctx.database.appUrl })
    await rt.connect()
    try {
      // the runtime role may INSERT: it writes the chain's next event with the right hash and a guessed link
      await rt.query(
        `INSERT INTO audit_event (id, occurred_at, action, entity_type, entity_id, before, after, prev_hash, hash, link)
         VALUES ($1, $2, 'change_request.approve', 'ChangeRequest', '1', 'null', 'null', $3, $4, $5)`,
        [id, forged.occurred_at, head.hash, hash, linkOf(hash, Buffer.alloc(32, 7))],
      )
    } finally {
      await rt.end()
    }
    expect(await verifyAuditChain(ctx.db)).toEqual({
      ok: false,
      checked: all.length,
      badId: id,
      problem: 'keyed link does not match: written or rewritten without the audit key',
    })
    // without a link at all it is refused too
    await asSuperuser([['UPDATE audit_event SET link = NULL WHERE id = $1', [id]]])
    expect(await verifyAuditChain(ctx.db)).toMatchObject({
      ok: false,
      badId: id,
      problem: 'event has no keyed link although the events before it have: forged or rewritten',
    })
    await asSuperuser([['DELETE FROM audit_event WHERE id = $1', [id]]])
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true })
  })

  it('catches a superuser who rewrites every event and recomputes every hash', async () => {
    const before = await rows()
    let prev = '0'.repeat(64)
    const statements: [string, unknown[]][] = []
    for (const r of before) {
      const changed = { ...r, reason: 'rewritten' } as Row
      const hash = hashEvent({
        ...{
          occurredAt: r.occurred_at as Date,
          actorId: r.actor_id as number | null,
          action: r.action as string,
          entityType: r.entity_type as string,
          entityId: r.entity_id as string | null,
          before: r.before,
          after: r.after,
          batchId: r.batch_id as string | null,
          requestId: r.request_id as string | null,
          ip: r.ip as string | null,
        },
        reason: changed.reason as string,
        prevHash: prev,
        keyed: { id: Number(r.id), siteId: r.site_id as number | null },
      })
      statements.push([
        'UPDATE audit_event SET reason = $1, prev_hash = $2, hash = $3 WHERE id = $4',
        ['rewritten', prev, hash, r.id],
      ])
      prev = hash
    }
    // hashes are UNIQUE: move them aside first, then write the rewritten chain
    await asSuperuser([
      ["UPDATE audit_event SET prev_hash = lpad(id::text, 64, 'x'), hash = lpad(id::text, 64, 'y')", []],
      ...statements,
    ])
    expect(await verifyAuditChain(ctx.db)).toEqual({
      ok: false,
      checked: 0,
      badId: Number(before[0].id),
      problem: 'keyed link does not match: written or rewritten without the audit key',
    })
    // put it back
    await asSuperuser([
      ["UPDATE audit_event SET prev_hash = lpad(id::text, 64, 'x'), hash = lpad(id::text, 64, 'y')", []],
      ...before.map(
        (r) =>
          [
            'UPDATE audit_event SET reason = $1, prev_hash = $2, hash = $3 WHERE id = $4',
            [r.reason, r.prev_hash, r.hash, r.id],
          ] as [string, unknown[]],
      ),
    ])
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true })
  })
})

describe('signed checkpoints outside the database', () => {
  it('`npm run audit:checkpoint` writes a signed file and mails it to the auditors of every site', async () => {
    const res = await cli('audit-checkpoint')
    expect(res.out).toMatch(
      /Checkpoint written: .*checkpoint-.*\.json \(head id \d+, \d+ events\); mailed to [1-9]\d* auditor/,
    )
    expect(res.code).toBe(0)
    const files = await readdir(dir)
    expect(files).toHaveLength(1)
    const c = JSON.parse(await readFile(path.join(dir, files[0]), 'utf8'))
    const head = (await rows()).at(-1)!
    expect(c).toMatchObject({ version: 1, headId: Number(head.id), headHash: head.hash })
    expect(Buffer.from(c.signature, 'base64')).toHaveLength(64) // an Ed25519 signature is 64 bytes (RFC 8032 §5.1.6)
    const auditors = (
      await su.query(
        "SELECT DISTINCT u.email FROM app_user u JOIN role_assignment r ON r.user_id = u.id WHERE r.role = 'auditor' AND u.active",
      )
    ).rows.map((r) => r.email)
    const mailed = (await su.query("SELECT to_addr, text_body FROM mail_outbox WHERE topic = 'audit_checkpoint'")).rows
    expect(mailed.map((m) => m.to_addr).sort()).toEqual(auditors.sort())
    expect(mailed[0].text_body).toContain(c.signature)

    const ok = await cli('audit-verify')
    expect(ok.out).toMatch(/Audit trail intact: \d+ events checked in [\d.]+ s against 1 checkpoint/)
    expect(ok.code).toBe(0)
  }, 120_000)

  it('names a deleted event by its own id', async () => {
    const all = await rows()
    const victim = all[5]
    const saved = { ...victim }
    await asSuperuser([['DELETE FROM audit_event WHERE id = $1', [victim.id]]])
    expect(await verifyAuditChain(ctx.db)).toMatchObject({
      ok: false,
      badId: Number(victim.id),
      problem: `event ${victim.id} is missing (deleted)`,
    })
    const cols = Object.keys(saved)
    await asSuperuser([
      [
        `INSERT INTO audit_event (${cols.join(', ')}) VALUES (${cols.map((_, i) => `$${i + 1}`).join(', ')})`,
        cols.map((k) => (k === 'before' || k === 'after' ? JSON.stringify(saved[k]) : saved[k])),
      ],
    ])
    expect(await verifyAuditChain(ctx.db)).toMatchObject({ ok: true })
  })

  it('reports the newest events cut off, with the first missing id and the checkpoint concerned', async () => {
    const all = await rows()
    const cut = all.slice(-3)
    await asSuperuser([['DELETE FROM audit_event WHERE id >= $1', [cut[0].id]]])
    const file = (await readdir(dir))[0]
    const res = await cli('audit-verify')
    expect(res.code).toBe(1)
    expect(res.out).toContain(`Audit trail BROKEN at event ${cut[0].id}: events from ${cut[0].id} to ${cut[2].id}`)
    expect(res.out).toContain('truncated')
    expect(res.out).toContain(`[checkpoint ${file}]`)
    // a checkpoint file changed by hand no longer counts and is reported
    const text = await readFile(path.join(dir, file), 'utf8')
    await writeFile(path.join(dir, file), text.replace(/"headId": \d+/, `"headId": ${Number(cut[0].id) - 1}`))
    const forged = await cli('audit-verify')
    expect(forged.out).toContain(`Checkpoint problem: checkpoint ${file} is not signed by this audit key`)
    expect(forged.code).toBe(1)
  }, 120_000)
})
